// The one field-error shape of the codebase: a path relative to the body or record it names
// ("reference.tape.tempC", "targets.0.label") and a message for a person. POST /api/sync answers
// with it, the registry API and forms use it, and the tablet keys its fields by the same paths.
export type FieldError = { path: string; message: string };

/** zod issues → FieldError[]: the issue's path joined with "." (api.md errors[]). */
export function issuesToErrors(issues: readonly { path: readonly PropertyKey[]; message: string }[]): FieldError[] {
  return issues.map((i) => ({ path: i.path.map(String).join("."), message: i.message }));
}
