import "./zod-config";
import { isRouteErrorResponse, Links, Meta, Outlet, Scripts, ScrollRestoration, useRouteLoaderData } from "react-router";
import { useContext } from "react";
import type { Route } from "./+types/root";
import { UpdatePrompt } from "./components/field/update-prompt";
import "./app.css";
import { themeFromRequest } from "./theme.server";
import { sendQueuedMailAfterAnswer } from "./http/middleware.server";
import { securityHeaders } from "./http/security.server";
import { NonceContext } from "./components/nonce";

export const middleware: Route.MiddlewareFunction[] = [securityHeaders, sendQueuedMailAfterAnswer];

export const links: Route.LinksFunction = () => [
  { rel: "manifest", href: "/manifest.webmanifest" },
  { rel: "icon", href: "/icons/icon.svg", type: "image/svg+xml" },
  { rel: "apple-touch-icon", href: "/icons/icon-192.png" },
];

export async function loader({ request }: Route.LoaderArgs) {
  return { theme: await themeFromRequest(request) };
}

export function Layout({ children }: { children: React.ReactNode }) {
  const data = useRouteLoaderData<typeof loader>("root");
  const theme = data?.theme ?? "light";
  const nonce = useContext(NonceContext);
  return (
    <html lang="en" className={theme === "dark" ? "dark" : ""}>
      <head>
        <meta charSet="utf-8" />
        <meta name="viewport" content="width=device-width, initial-scale=1" />
        <meta name="theme-color" content={theme === "dark" ? "#0d0f12" : "#ffffff"} />
        <Meta />
        <Links />
      </head>
      <body>
        {children}
        <UpdatePrompt />
        <ScrollRestoration nonce={nonce} />
        <Scripts nonce={nonce} />
      </body>
    </html>
  );
}

export default function App() {
  return <Outlet />;
}

export function ErrorBoundary({ error }: Route.ErrorBoundaryProps) {
  let title = "Something went wrong";
  let detail = "An unexpected error stopped this page. Your queued field records are safe on this device.";
  let forbidden = false;
  let stack: string | undefined;
  if (isRouteErrorResponse(error)) {
    if (error.status === 404) {
      title = "Page not found";
      detail = "There is no page at this address.";
    } else if (error.status === 401) {
      title = "Please sign in";
      detail = "Your sign-in has ended or you have not signed in yet.";
    } else if (error.status === 403) {
      title = "Not allowed";
      detail = typeof error.data === "string" && error.data ? error.data : "Your role may not open this page.";
      // Only the way back to what the role can use: no sign-in prompt, no talk of a tablet's queue (issue 14).
      forbidden = true;
    } else {
      title = `Error ${error.status}`;
      detail = typeof error.data === "string" ? error.data : error.statusText;
    }
  } else if (import.meta.env.DEV && error instanceof Error) {
    detail = error.message;
    stack = error.stack;
  }
  return (
    <main className="mx-auto max-w-2xl p-6">
      <h1 className="text-3xl font-bold">{title}</h1>
      <p className="mt-3 text-lg">{detail}</p>
      <p className="mt-6 flex gap-3">
        <a className="btn" href="/">
          Go to the start page
        </a>
        {forbidden ? null : (
          <a className="btn-secondary" href="/login">
            Sign in
          </a>
        )}
      </p>
      {stack ? <pre className="mt-6 overflow-auto text-sm">{stack}</pre> : null}
    </main>
  );
}
