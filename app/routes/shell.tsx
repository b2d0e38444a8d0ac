import { Outlet, useRouteLoaderData } from "react-router";
import type { Route } from "./+types/shell";
import { getOptionalUser } from "~/auth/guards.server";
import { AppShell } from "~/components/shell";

export async function loader({ request }: Route.LoaderArgs) {
  const user = await getOptionalUser(request);
  return { user: user ? { email: user.email, name: user.name, role: user.role } : null };
}

export default function Shell({ loaderData }: Route.ComponentProps) {
  const root = useRouteLoaderData("root") as { theme: "light" | "dark" } | undefined;
  return (
    <AppShell user={loaderData.user} theme={root?.theme ?? "light"}>
      <Outlet />
    </AppShell>
  );
}
