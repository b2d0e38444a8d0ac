import { Link } from "react-router";
import type { Route } from "./+types/home";
import { getOptionalUser } from "~/auth/guards.server";
import { VerdictBadge } from "~/components/verdict-badge";
import { answering } from "~/http/app-error.server";
import { projectsHome, type HomeProject } from "~/models/home.server";

export const meta: Route.MetaFunction = () => [{ title: "Shotbook — range checks for lidar and ToF sensors" }];

export async function loader({ request }: Route.LoaderArgs) {
  const user = await getOptionalUser(request);
  // A viewer (client or auditor) lands on their projects' reports, not on screens they cannot use (issue 14).
  const projects = user?.role === "viewer" ? await answering(() => projectsHome(user)) : null;
  return { role: user?.role ?? null, name: user?.name ?? null, projects };
}

const CARDS = [
  { to: "/field", title: "Field", text: "Start a session, log check-shots offline, see the coverage checklist and the outbox.", roles: ["crew", "qa", "admin"] },
  { to: "/review", title: "Review", text: "Sensor verdicts, reports with charts, the range-error map, exclusions and sign-off.", roles: ["qa", "admin", "crew"] },
  { to: "/admin", title: "Admin", text: "Users, API tokens, sensors, tapes, sites and targets, projects and acceptance rules.", roles: ["admin"] },
] as const;

function ProjectReports({ projects }: { projects: HomeProject[] }) {
  if (projects.length === 0) {
    return (
      <p className="card text-lg" data-testid="no-projects">
        You are not a member of any project yet. The firm that invited you adds you to its projects; their reports appear here.
      </p>
    );
  }
  return (
    <div className="space-y-6">
      {projects.map((p) => (
        <section key={p.id} className="card space-y-3" aria-labelledby={`project-${p.id}`} data-testid="home-project">
          <h2 id={`project-${p.id}`} className="text-2xl font-bold">
            {p.name}
            {p.client ? <span className="font-normal text-muted"> — {p.client}</span> : null}
          </h2>
          {p.sensors.length === 0 ? (
            <p>No sensors on this project yet.</p>
          ) : (
            <div className="overflow-x-auto">
              <table className="w-full border-collapse text-left">
                <caption className="sr-only">Sensors of {p.name} and their verdicts by the project's acceptance rule</caption>
                <thead>
                  <tr className="border-b-2 border-line">
                    <th scope="col" className="p-2">
                      Sensor
                    </th>
                    <th scope="col" className="p-2">
                      Verdict
                    </th>
                    <th scope="col" className="p-2 text-right">
                      Shots
                    </th>
                    <th scope="col" className="p-2 text-right">
                      RMSE
                    </th>
                    <th scope="col" className="p-2">
                      Last session
                    </th>
                  </tr>
                </thead>
                <tbody>
                  {p.sensors.map((s) => (
                    <tr key={s.id} className="border-b border-line">
                      <td className="p-2">
                        <Link to={s.href} className="inline-flex min-h-11 items-center font-bold underline underline-offset-4">
                          {s.label}
                        </Link>
                      </td>
                      <td className="p-2">
                        <VerdictBadge verdict={s.verdict} />
                      </td>
                      <td className="num p-2 text-right">{s.n}</td>
                      <td className="num p-2 text-right">{s.rmseMm == null ? "—" : `${s.rmseMm.toFixed(1)} mm`}</td>
                      <td className="num p-2">{s.lastSessionAt ? s.lastSessionAt.slice(0, 10) : "—"}</td>
                    </tr>
                  ))}
                </tbody>
              </table>
            </div>
          )}
          <p className="text-sm text-muted">Verdicts by this project's acceptance rule, from its own check-shots. Open a sensor for its full report, chart, map and print.</p>
          <p>
            <Link to={`/review/projects/${p.id}/report`} className="btn-secondary">
              Project verification report
            </Link>
          </p>
        </section>
      ))}
    </div>
  );
}

export default function Home({ loaderData }: Route.ComponentProps) {
  const { role, name, projects } = loaderData;
  return (
    <div className="space-y-6">
      <h1 className="text-3xl font-bold">{role ? `Welcome${name ? `, ${name}` : ""}` : "Shotbook"}</h1>
      {projects ? (
        <>
          <p className="max-w-3xl text-lg">The range checks of your projects' lidar and time-of-flight sensors: each sensor's verdict and its report.</p>
          <ProjectReports projects={projects} />
        </>
      ) : (
        <p className="max-w-3xl text-lg">
          The logbook and the judgement for range checks of lidar and time-of-flight sensors: check-shots in the field, range bias and tolerance per sensor on the server, sign-off and the client's
          report in the office.
        </p>
      )}
      {role && !projects ? (
        <ul className="grid gap-4 sm:grid-cols-3">
          {CARDS.filter((c) => (c.roles as readonly string[]).includes(role)).map((c) => (
            <li key={c.to} className="card">
              <h2 className="text-2xl font-bold">
                <Link to={c.to} className="underline underline-offset-4">
                  {c.title}
                </Link>
              </h2>
              <p className="mt-2">{c.text}</p>
            </li>
          ))}
        </ul>
      ) : null}
      {!role ? (
        <p>
          <Link to="/login" className="btn">
            Sign in with an e-mail code
          </Link>
        </p>
      ) : null}
    </div>
  );
}
