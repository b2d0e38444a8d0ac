// Issue 13: the one place an application error becomes an HTTP answer. Models throw AppError
// (app/contract/errors.ts) and never build a Response; loaders, actions and resource routes use
// these helpers, so every route answers the same way: api.md's `{ "error": message }` body (with
// `errors[]` when the model listed field errors) and the error's status.
import { AppError } from "~/contract/errors";

export { AppError };

/** api.md's JSON answer for an application error. */
export function appErrorResponse(e: AppError): Response {
  return Response.json(e.errors ? { error: e.message, errors: e.errors } : { error: e.message }, { status: e.status });
}

/** An AppError as its Response (for `throw`); anything else unchanged, to be rethrown as it was. */
export function asResponse(e: unknown): unknown {
  return e instanceof AppError ? appErrorResponse(e) : e;
}

/** Runs a loader's or action's work; an AppError it throws leaves as its Response (a boundary shows it). */
export async function answering<T>(work: () => Promise<T>): Promise<T> {
  try {
    return await work();
  } catch (e) {
    throw asResponse(e);
  }
}

/**
 * For a form's action: a 400 AppError is returned, to be shown beside its field (or above the form);
 * a 403/404 leaves as its Response, and any other error is rethrown unchanged.
 */
export function formError(e: unknown): AppError {
  if (e instanceof AppError && e.status === 400) return e;
  throw asResponse(e);
}
