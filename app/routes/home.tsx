import { Link } from "react-router";
import type { Route } from "./+types/home";
import { getOptionalUser } from "~/auth/guards.server";

export const meta: Route.MetaFunction = () => [{ title: "Shotbook — range checks for lidar and ToF sensors" }];

export async function loader({ request }: Route.LoaderArgs) {
  const user = await getOptionalUser(request);
  return { role: user?.role ?? null, name: user?.name ?? null };
}

const CARDS = [
  { to: "/field", title: "Field", text: "Start a session, log check-shots offline, see the coverage checklist and the outbox.", roles: ["crew", "qa", "admin"] },
  { to: "/review", title: "Review", text: "Sensor verdicts, reports with charts, the range-error map, exclusions and sign-off.", roles: ["qa", "admin", "viewer", "crew"] },
  { to: "/admin", title: "Admin", text: "Users, API tokens, sensors, tapes, sites and targets, projects and acceptance rules.", roles: ["admin"] },
] as const;

export default function Home({ loaderData }: Route.ComponentProps) {
  const { role, name } = loaderData;
  return (
    <div className="space-y-6">
      <h1 className="text-3xl font-bold">{role ? `Welcome${name ? `, ${name}` : ""}` : "Shotbook"}</h1>
      <p className="max-w-3xl text-lg">
        The logbook and the judgement for range checks of lidar and time-of-flight sensors: check-shots in the field,
        range bias and tolerance per sensor on the server, sign-off and the client's report in the office.
      </p>
      {role ? (
        <ul className="grid gap-4 sm:grid-cols-3">
          {CARDS.filter((c) => (c.roles as readonly string[]).includes(role)).map((c) => (
            <li key={c.to} className="card">
              <h2 className="text-2xl font-bold">
                <Link to={c.to} className="underline underline-offset-4">{c.title}</Link>
              </h2>
              <p className="mt-2">{c.text}</p>
            </li>
          ))}
        </ul>
      ) : (
        <p>
          <Link to="/login" className="btn">Sign in with an e-mail code</Link>
        </p>
      )}
    </div>
  );
}
