// A local fake SMTP server for development, the demo and tests: it receives real SMTP on
// 127.0.0.1 and writes each message as an .eml file into MAIL_DIR. Never for production.
import { mkdirSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { SMTPServer } from "smtp-server";

export type FakeSmtp = { port: number; close: () => Promise<void> };

export async function startFakeSmtp(opts: { port: number; mailDir: string; host?: string }): Promise<FakeSmtp> {
  mkdirSync(opts.mailDir, { recursive: true });
  let seq = 0;
  const server = new SMTPServer({
    authOptional: true,
    disabledCommands: ["STARTTLS"],
    banner: "Shotbook local mail fake",
    logger: false,
    onData(stream, session, callback) {
      const chunks: Buffer[] = [];
      stream.on("data", (c: Buffer) => chunks.push(c));
      stream.on("end", () => {
        const stamp = new Date().toISOString().replace(/[:.]/g, "-");
        const to = session.envelope.rcptTo
          .map((r) => r.address)
          .join(",")
          .replace(/[^a-zA-Z0-9@._,-]/g, "_");
        const name = `${stamp}-${String(++seq).padStart(4, "0")}-${to}.eml`;
        writeFileSync(join(opts.mailDir, name), Buffer.concat(chunks));
        callback();
      });
    },
  });
  await new Promise<void>((resolve, reject) => {
    server.once("error", reject);
    server.listen(opts.port, opts.host ?? "127.0.0.1", () => resolve());
  });
  const address = server.server.address();
  const port = typeof address === "object" && address ? address.port : opts.port;
  return { port, close: () => new Promise<void>((r) => server.close(() => r())) };
}
