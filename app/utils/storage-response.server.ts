import { data } from "react-router";
import { storage, StorageKeyError, StorageUnavailableError } from "./storage.server";

/**
 * Opens a stored file for a download route (after its role checks), turning storage failures
 * into clear answers: a key outside this practice's namespace is refused with 403, a store that
 * cannot be reached answers 503. Null when the object is missing.
 */
export async function openStored(key: string) {
  try {
    return await storage.stream(key);
  } catch (e) {
    if (e instanceof StorageKeyError) throw data({ error: e.message }, { status: 403 });
    if (e instanceof StorageUnavailableError)
      throw data(
        { error: "File storage is not reachable at the moment; try again in a few minutes." },
        { status: 503 },
      );
    throw e;
  }
}
