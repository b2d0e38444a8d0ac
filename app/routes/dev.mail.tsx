import { useEffect } from "react";
import { data, useRevalidator } from "react-router";
import type { Route } from "./+types/dev.mail";
import { getEnv } from "~/env.server";
import { readMailDir } from "~/mail/eml.server";

export const meta: Route.MetaFunction = () => [{ title: "Mail received by the local fake — Shotbook" }];

// Public on purpose, and only in development or the demo (else 404): a person trying the demo
// reads their sign-in code here before they are signed in. It shows the local fake's inbox only.
export async function loader() {
  const env = getEnv();
  if (env.NODE_ENV !== "development" && env.DEV_MAIL_VIEWER !== "true") throw data("There is no page at this address.", { status: 404 });
  const mails = readMailDir(env.MAIL_DIR, 50).map(({ html: _html, ...m }) => m);
  return { mails };
}

function when(iso: string | null) {
  if (!iso) return "time unknown";
  const d = new Date(iso);
  return d.toLocaleString("en-GB", { dateStyle: "medium", timeStyle: "medium" });
}

export default function DevMail({ loaderData }: Route.ComponentProps) {
  const revalidator = useRevalidator();
  useEffect(() => {
    // New mail shows up without a reload while someone waits for their code.
    const id = setInterval(() => {
      if (document.visibilityState === "visible") void revalidator.revalidate();
    }, 4000);
    return () => clearInterval(id);
  }, [revalidator]);
  const { mails } = loaderData;
  return (
    <div className="space-y-6">
      <div className="flex flex-wrap items-end justify-between gap-3">
        <div>
          <h1 className="text-3xl font-bold">Mail received (development only)</h1>
          <p className="mt-1 text-muted">Messages the local mail fake received, newest first. This page exists only in development and the demo.</p>
        </div>
        <button type="button" className="btn-secondary" onClick={() => void revalidator.revalidate()}>
          {revalidator.state === "loading" ? "Refreshing…" : "Refresh"}
        </button>
      </div>
      {mails.length === 0 ? (
        <p className="card text-lg">No mail yet. Ask for a sign-in code on the sign-in page; it shows up here within seconds.</p>
      ) : (
        <ol className="space-y-4" aria-label="Received messages">
          {mails.map((m) => (
            <li key={m.file} className="card space-y-3" data-testid="dev-mail">
              <div className="flex flex-wrap items-baseline justify-between gap-2">
                <h2 className="text-xl font-bold">{m.subject || "(no subject)"}</h2>
                <time className="num text-muted" dateTime={m.date ?? undefined}>
                  {when(m.date)}
                </time>
              </div>
              <p>
                <span className="font-bold">To:</span> <span className="break-all">{m.to}</span>
              </p>
              {m.code ? (
                <p className="flex flex-wrap items-center gap-3">
                  <span className="font-bold">Sign-in code:</span>
                  <span className="num rounded-md border-2 border-accent px-3 py-1 font-mono text-4xl font-bold tracking-[0.3em]" data-testid="dev-mail-code">
                    {m.code}
                  </span>
                </p>
              ) : null}
              <details open={!m.code}>
                <summary className="min-h-11 cursor-pointer py-2 font-bold">Text of the message</summary>
                <pre className="mt-2 overflow-x-auto whitespace-pre-wrap break-words rounded-md border-2 border-line bg-bg p-3 text-base">{m.text}</pre>
              </details>
            </li>
          ))}
        </ol>
      )}
    </div>
  );
}
