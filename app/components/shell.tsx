import { Form, NavLink, useLocation } from "react-router";
import type { ALL } from "~/auth/access";

type Role = (typeof ALL)[number];
export type ShellUser = { email: string; name: string; role: Role } | null;

const AREAS: { to: string; label: string; roles: Role[] }[] = [
  { to: "/field", label: "Field", roles: ["crew", "qa", "admin"] },
  { to: "/review", label: "Review", roles: ["qa", "admin", "viewer", "crew"] },
  { to: "/admin", label: "Admin", roles: ["admin"] },
];

export function AppShell({ user, theme, children }: { user: ShellUser; theme: "light" | "dark"; children: React.ReactNode }) {
  const location = useLocation();
  const here = location.pathname + location.search;
  return (
    <div className="flex min-h-screen flex-col">
      <a href="#main" className="sr-only focus:not-sr-only">
        Skip to content
      </a>
      <header className="no-print border-b-2 border-line bg-surface">
        <div className="mx-auto flex max-w-6xl flex-wrap items-center gap-x-4 gap-y-2 px-4 py-2">
          <NavLink to="/" className="flex min-h-11 items-center gap-2 text-xl font-bold">
            <svg width="28" height="28" viewBox="0 0 32 32" aria-hidden="true">
              <circle cx="16" cy="16" r="13" fill="none" stroke="currentColor" strokeWidth="3" />
              <circle cx="16" cy="16" r="5" fill="currentColor" />
              <path d="M16 0v8M16 24v8M0 16h8M24 16h8" stroke="currentColor" strokeWidth="3" />
            </svg>
            Shotbook
          </NavLink>
          {user ? (
            <nav aria-label="Work areas" className="flex flex-wrap gap-1">
              {AREAS.filter((a) => a.roles.includes(user.role)).map((a) => (
                <NavLink
                  key={a.to}
                  to={a.to}
                  className={({ isActive }) => `flex min-h-11 items-center rounded-md px-4 text-lg font-bold ${isActive ? "bg-accent text-accent-fg" : "underline-offset-4 hover:underline"}`}
                >
                  {a.label}
                </NavLink>
              ))}
            </nav>
          ) : null}
          <div className="ml-auto flex flex-wrap items-center gap-2">
            <Form method="post" action="/theme">
              <input type="hidden" name="redirectTo" value={here} />
              <input type="hidden" name="theme" value={theme === "dark" ? "light" : "dark"} />
              <button type="submit" className="btn-secondary" aria-label={theme === "dark" ? "Switch to daylight theme" : "Switch to dark theme"}>
                {theme === "dark" ? "☀ Daylight" : "☾ Dark"}
              </button>
            </Form>
            {user ? (
              <>
                <span className="text-base" data-testid="signed-in-user">
                  <span className="font-bold">{user.name || user.email}</span> <span className="rounded border-2 border-line px-1.5 text-sm uppercase">{user.role}</span>
                </span>
                <Form method="post" action="/logout">
                  <button type="submit" className="btn-secondary">
                    Sign out
                  </button>
                </Form>
              </>
            ) : (
              <NavLink to="/login" className="btn">
                Sign in
              </NavLink>
            )}
          </div>
        </div>
      </header>
      <main id="main" className="mx-auto w-full max-w-6xl flex-1 px-4 py-6">
        {children}
      </main>
      <footer className="no-print border-t-2 border-line px-4 py-3 text-sm text-muted">
        <p className="mx-auto max-w-6xl">
          Laser safety: follow your sensor's IEC 60825-1 class and the maker's manual; never aim at people, vehicles or aircraft; set out traffic control when targets stand by a road. Shotbook checks
          range performance; it is no calibration certificate.
        </p>
      </footer>
    </div>
  );
}
