import { Link } from "react-router";
import type { Route } from "./+types/admin";
import { ADMIN } from "~/auth/access";
import { requireRole } from "~/auth/guards.server";

export const meta: Route.MetaFunction = () => [{ title: "Admin — Shotbook" }];

export async function loader({ request }: Route.LoaderArgs) {
  await requireRole(request, ADMIN);
  return null;
}

const SECTIONS = [
  { to: "/admin/users", title: "Users", text: "Invite people, change roles, deactivate, end their sign-ins." },
  { to: "/admin/tokens", title: "API tokens", text: "Bearer tokens for pipelines and scripts: create, see last use, revoke." },
  { to: "/admin/sensors", title: "Sensors", text: "Range sensors with their kind, wavelength, tolerance and calibration due date." },
  { to: "/admin/tapes", title: "Tapes", text: "Steel tapes with their standard temperature, tension and certificate correction." },
  { to: "/admin/sites", title: "Sites", text: "Baselines and test ranges: stations, targets, reflectance, reference distances." },
  { to: "/admin/projects", title: "Projects", text: "Jobs with their sensors, sites and acceptance rules." },
];

export default function Admin() {
  return (
    <div className="space-y-6">
      <h1 className="text-3xl font-bold">Admin</h1>
      <ul className="grid gap-4 sm:grid-cols-2 lg:grid-cols-3">
        {SECTIONS.map((s) => (
          <li key={s.to} className="card">
            <h2 className="text-2xl font-bold">
              <Link to={s.to} className="flex min-h-11 items-center underline underline-offset-4">
                {s.title}
              </Link>
            </h2>
            <p className="mt-1">{s.text}</p>
          </li>
        ))}
      </ul>
    </div>
  );
}
