/**
 * One way to fail. A domain rule that refuses raises `DomainError` (or a subclass named for its
 * area) with a message for people, a status and optionally the fields at fault; a route either
 * lets it reach its error boundary or turns it into a form reply with `failureReply`. A record that
 * is missing, or not the signed-in user's to see, is `notFound()`; any other precondition of a
 * request is `invariantResponse(condition, message, status)`.
 */
import { data } from "react-router";

export type FailureStatus = 400 | 401 | 403 | 404 | 409 | 413 | 415 | 422 | 429 | 502 | 503;
export type FieldErrors = Record<string, string[]>;
export type DomainErrorOptions = { status?: FailureStatus; field?: string; fieldErrors?: FieldErrors; cause?: unknown };

export class DomainError extends Error {
  readonly status: FailureStatus;
  readonly fieldErrors: FieldErrors;

  constructor(message: string, options: DomainErrorOptions = {}) {
    super(message, options.cause === undefined ? undefined : { cause: options.cause });
    this.name = new.target.name;
    this.status = options.status ?? 400;
    this.fieldErrors = options.fieldErrors ?? (options.field ? { [options.field]: [message] } : {});
  }

  /** The first field at fault, if any. */
  get field(): string | undefined {
    return Object.keys(this.fieldErrors)[0];
  }
}

/** Throws a response with `status` and `{ error: message }` unless `condition` holds. */
export function invariantResponse(condition: unknown, message: string, status: FailureStatus = 400): asserts condition {
  if (!condition) throw data({ error: message }, { status });
}

/** Throws 404. Another patient's record answers the same as a missing one, so ids cannot be probed. */
export function notFound(message = "There is no such record, or it is not yours to see."): never {
  throw data({ error: message }, { status: 404 });
}

/**
 * The reply of a form action for a refused domain rule: the message and the fields at fault,
 * with the error's status. Anything else is re-thrown (a bug answers 500 through the boundary).
 */
export function failureReply(error: unknown) {
  if (!(error instanceof DomainError)) throw error;
  return data({ ok: false as const, error: error.message, fieldErrors: error.fieldErrors }, { status: error.status });
}
