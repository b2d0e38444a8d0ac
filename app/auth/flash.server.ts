// One-shot messages after a redirect ("Invitation sent to …"), kept in a short cookie.
import { createCookieSessionStorage } from "react-router";
import { cookieSecure, getEnv } from "~/env.server";

type Flash = { kind: "ok" | "warn"; text: string };

let storage: ReturnType<typeof createCookieSessionStorage<Record<string, never>, { flash: Flash }>> | undefined;

function flashStorage() {
  storage ??= createCookieSessionStorage<Record<string, never>, { flash: Flash }>({
    cookie: { name: "__shotbook_flash", httpOnly: true, sameSite: "lax", path: "/", secure: cookieSecure(), secrets: getEnv().SESSION_SECRET, maxAge: 60 },
  });
  return storage;
}

/** The Set-Cookie value that carries a message to the next page. */
export async function setFlash(request: Request, flash: Flash) {
  const s = await flashStorage().getSession(request.headers.get("Cookie"));
  s.flash("flash", flash);
  return flashStorage().commitSession(s);
}

/** Reads (and clears) the message; pass `headers` on in the loader's answer. */
export async function takeFlash(request: Request) {
  const s = await flashStorage().getSession(request.headers.get("Cookie"));
  const flash = (s.get("flash") as Flash | undefined) ?? null;
  const headers = new Headers();
  if (flash) headers.append("Set-Cookie", await flashStorage().commitSession(s));
  return { flash, headers };
}
