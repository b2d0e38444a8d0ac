import { data, redirect } from "react-router";
import type { Route } from "./+types/theme";
import { themeCookie } from "~/theme.server";
import { safeRedirect } from "~/utils/http";
import { readFormCapped } from "~/http/body.server";

// Anyone, signed in or not, may pick the theme: it only sets a cookie.
export async function action({ request }: Route.ActionArgs) {
  const form = await readFormCapped(request);
  const theme = form.get("theme");
  if (theme !== "light" && theme !== "dark") {
    return data({ error: "Theme must be light or dark." }, { status: 400 });
  }
  return redirect(safeRedirect(form.get("redirectTo")), { headers: { "Set-Cookie": await themeCookie.serialize(theme) } });
}

export async function loader() {
  return redirect("/");
}
