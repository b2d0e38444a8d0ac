import { Link } from "react-router";
import type { Route } from "./+types/auth.magic";
import { verifyMagicLink } from "~/auth/sign-in.server";

export const meta: Route.MetaFunction = () => [{ title: "Sign-in link — Shotbook" }];

// Public: the link in the sign-in e-mail. It signs in and redirects, or says why it cannot.
export async function loader({ request, context }: Route.LoaderArgs) {
  const outcome = await verifyMagicLink(request, context);
  if ("response" in outcome) return outcome.response;
  return { error: outcome.error };
}

export default function MagicLink({ loaderData }: Route.ComponentProps) {
  return (
    <div className="mx-auto max-w-lg space-y-6">
      <h1 className="text-3xl font-bold">This sign-in link did not work</h1>
      <p role="alert" className="rounded-md border-2 border-fail p-3 text-lg font-bold text-fail">
        <span aria-hidden="true">⚠ </span>
        {loaderData.error}
      </p>
      <p className="flex flex-wrap gap-3">
        <Link to="/login/code" className="btn">
          Type the code instead
        </Link>
        <Link to="/login" className="btn-secondary">
          Request a new code
        </Link>
      </p>
    </div>
  );
}
