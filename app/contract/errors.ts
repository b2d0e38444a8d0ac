// The one field-error shape of the codebase: a path relative to the body or record it names
// ("reference.tape.tempC", "targets.0.label") and a message for a person. POST /api/sync answers
// with it, the registry API and forms use it, and the tablet keys its fields by the same paths.
export type FieldError = { path: string; message: string };

/** zod issues → FieldError[]: the issue's path joined with "." (api.md errors[]). */
export function issuesToErrors(issues: readonly { path: readonly PropertyKey[]; message: string }[]): FieldError[] {
  return issues.map((i) => ({ path: i.path.map(String).join("."), message: i.message }));
}

/**
 * The one application error (issue 13): what a model throws when a request cannot be served as
 * asked — a role that may not do it (403), a record outside the actor's projects or unknown (404),
 * or a value a person must change (400, with the record path of the field it belongs to). Models never
 * build HTTP answers; routes turn this into one with `app/http/app-error.server.ts`.
 */
export class AppError extends Error {
  override readonly name = "AppError";
  constructor(
    readonly status: number,
    message: string,
    /** The field (record path) the message belongs to, for a form; none for the whole request. */
    readonly field?: string,
    /** api.md's `errors[]` when the answer lists them (an invalid query). */
    readonly errors?: FieldError[],
  ) {
    super(message);
  }
}

/** A model's answer `{ status, body: { error, errors? } }` (4xx) as the error to throw. */
export function appErrorOf(r: { status: number; body: { error: string; errors?: FieldError[] } }): AppError {
  return new AppError(r.status, r.body.error, undefined, r.body.errors);
}
