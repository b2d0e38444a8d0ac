import { data, redirect } from "react-router";
import type { Route } from "./+types/theme";
import { themeCookie } from "~/theme.server";

// Anyone, signed in or not, may pick the theme: it only sets a cookie.
export async function action({ request }: Route.ActionArgs) {
  const form = await request.formData();
  const theme = form.get("theme");
  if (theme !== "light" && theme !== "dark") {
    return data({ error: "Theme must be light or dark." }, { status: 400 });
  }
  const back = String(form.get("redirectTo") ?? "/");
  const safe = back.startsWith("/") && !back.startsWith("//") ? back : "/";
  return redirect(safe, { headers: { "Set-Cookie": await themeCookie.serialize(theme) } });
}

export async function loader() {
  return redirect("/");
}
