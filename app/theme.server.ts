import { createCookie } from "react-router";

export type Theme = "light" | "dark";

export const themeCookie = createCookie("theme", { path: "/", sameSite: "lax", maxAge: 60 * 60 * 24 * 365 });

export async function themeFromRequest(request: Request): Promise<Theme> {
  try {
    const value = await themeCookie.parse(request.headers.get("Cookie"));
    return value === "dark" ? "dark" : "light";
  } catch {
    return "light";
  }
}
