// The server's reasons for refusing a record, shown above its fix form (shot or session).
import type { FieldError } from "~/offline/types";

export function RefusedBox({ what, errors, label }: { what: string; errors: FieldError[]; label: (path: string) => string }) {
  if (!errors.length) return null;
  return (
    <div className="rounded-md border-2 border-fail p-3" role="alert" data-testid="refused-box">
      <p className="font-bold">The server refused this {what}:</p>
      <ul className="list-disc pl-6">
        {errors.map((e, i) => (
          <li key={i}>
            <strong>{label(e.path)}</strong>: {e.message}
          </li>
        ))}
      </ul>
    </div>
  );
}
