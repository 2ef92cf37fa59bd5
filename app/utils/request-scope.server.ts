/**
 * Values shared by the loaders of one request. React Router hands each loader of a page (root,
 * layout, page) its own copy of the Request, so a value read by several of them, such as the
 * signed-in user, would be read once per loader. The root middleware runs each request inside a
 * scope; `requestMemo` keeps a value for the rest of that request and nothing longer.
 */
import { AsyncLocalStorage } from "node:async_hooks";

const scope = new AsyncLocalStorage<Map<string, Promise<unknown>>>();

export function inRequestScope<T>(fn: () => Promise<T>): Promise<T> {
  return scope.run(new Map(), fn);
}

/** `make()` once per key within the current request (every call outside a request makes anew). */
export function requestMemo<T>(key: string, make: () => Promise<T>): Promise<T> {
  const store = scope.getStore();
  if (!store) return make();
  let value = store.get(key) as Promise<T> | undefined;
  if (!value) {
    value = make();
    store.set(key, value);
    // A failed read is not kept: the next caller asks again and sees the error itself.
    value.catch(() => store.delete(key));
  }
  return value;
}
