// A free TCP port on the loopback for a test's own server (mail fake, app, proxy, s3rver): asked
// of the OS by listening on port 0, then released for the caller to bind.
import { createServer } from "node:net";

export async function freePort(): Promise<number> {
  return new Promise<number>((res, rej) => {
    const s = createServer();
    s.once("error", rej);
    s.listen(0, "127.0.0.1", () => {
      const a = s.address();
      const p = typeof a === "object" && a ? a.port : 0;
      s.close(() => res(p));
    });
  });
}
