// Ports of `npm run demo`: the app's from --port, else PORT, else 3000; the mail fake's from
// --smtp-port, else SMTP_PORT, else 2525. Pure (argv and env in, options or an error out) so it
// is tested without starting anything.
export type DemoOptions = { port: number; smtpPort: number };
export const DEMO_USAGE = "Usage: [PORT=3000] [SMTP_PORT=2525] npm run demo [-- --port 3000 --smtp-port 2525]";

function portOf(text: string | undefined, what: string): number | string {
  const n = Number(text);
  if (text == null || text.trim() === "" || !Number.isInteger(n) || n < 1 || n > 65535) {
    return `${what} needs a whole number from 1 to 65535 (got ${text == null || text === "" ? "nothing" : JSON.stringify(text)}).`;
  }
  return n;
}

export function parseDemoOptions(argv: string[], env: Record<string, string | undefined>): { ok: true; options: DemoOptions } | { ok: false; error: string } {
  let port: number | string = env.PORT != null && env.PORT !== "" ? portOf(env.PORT, "PORT") : 3000;
  let smtpPort: number | string = env.SMTP_PORT != null && env.SMTP_PORT !== "" ? portOf(env.SMTP_PORT, "SMTP_PORT") : 2525;
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    const flag = a.startsWith("--port") ? "--port" : a.startsWith("--smtp-port") ? "--smtp-port" : null;
    if (!flag || (a !== flag && !a.startsWith(`${flag}=`))) return { ok: false, error: `Unknown option ${a}. ${DEMO_USAGE}` };
    const v = a === flag ? argv[++i] : a.slice(flag.length + 1);
    if (flag === "--port") port = portOf(v, "--port");
    else smtpPort = portOf(v, "--smtp-port");
  }
  if (typeof port === "string") return { ok: false, error: port };
  if (typeof smtpPort === "string") return { ok: false, error: smtpPort };
  if (port === smtpPort) return { ok: false, error: `The app and the mail fake cannot share port ${port}: set PORT and SMTP_PORT apart.` };
  return { ok: true, options: { port, smtpPort } };
}
