// A small HTTP proxy the browser tests route ALL of Chromium's traffic through (page, service
// worker, Background Sync), so switching it off is a real network cut. Playwright's
// context.setOffline only flips the page's network emulation: the service worker keeps
// fetching through it, so a test built on it can pass while the worker still reaches the server.
// Chromium is launched with --proxy-server pointing here and --proxy-bypass-list=<-loopback>
// (without it, 127.0.0.1 would skip the proxy). Plain requests are forwarded; CONNECT tunnels too.
import { createServer, request as httpRequest, type IncomingMessage, type Server, type ServerResponse } from "node:http";
import { connect, type Socket } from "node:net";

export type NetProxy = {
  port: number;
  /** Chromium flags that send every request, loopback included, through this proxy. */
  chromiumArgs: string[];
  /** true: requests pass; false: every connection is closed at once and open ones are cut. */
  setOnline(online: boolean): void;
  readonly online: boolean;
  /** Requests that reached the proxy while it was on (method and URL), for assertions. */
  readonly seen: { method: string; url: string }[];
  close(): Promise<void>;
};

export async function startNetProxy(): Promise<NetProxy> {
  let online = true;
  const sockets = new Set<Socket>();
  const seen: { method: string; url: string }[] = [];

  const track = (s: Socket) => {
    sockets.add(s);
    s.on("close", () => sockets.delete(s));
    s.on("error", () => s.destroy());
  };

  const server: Server = createServer((req: IncomingMessage, res: ServerResponse) => {
    if (!online) {
      req.socket.destroy();
      return;
    }
    let target: URL;
    try {
      target = new URL(req.url ?? "");
    } catch {
      res.writeHead(400).end("absolute URL expected");
      return;
    }
    seen.push({ method: req.method ?? "GET", url: target.href });
    const headers = { ...req.headers };
    delete headers["proxy-connection"];
    const upstream = httpRequest({ host: target.hostname, port: target.port || 80, method: req.method, path: target.pathname + target.search, headers }, (up) => {
      res.writeHead(up.statusCode ?? 502, up.statusMessage, up.headers);
      up.pipe(res);
    });
    upstream.on("socket", track);
    upstream.on("error", () => req.socket.destroy());
    req.pipe(upstream);
  });
  server.on("connection", (s) => {
    if (!online) {
      s.destroy();
      return;
    }
    track(s);
  });
  server.on("connect", (req: IncomingMessage, client: Socket, head: Buffer) => {
    if (!online) {
      client.destroy();
      return;
    }
    const [host, port] = (req.url ?? "").split(":");
    const up = connect(Number(port) || 443, host!, () => {
      client.write("HTTP/1.1 200 Connection Established\r\n\r\n");
      if (head.length) up.write(head);
      up.pipe(client);
      client.pipe(up);
    });
    track(up);
    up.on("error", () => client.destroy());
  });
  // Chromium keeps proxy connections alive; the cut must also end those.
  server.keepAliveTimeout = 5000;

  await new Promise<void>((res) => server.listen(0, "127.0.0.1", res));
  const addr = server.address();
  const port = typeof addr === "object" && addr ? addr.port : 0;

  return {
    port,
    chromiumArgs: [`--proxy-server=http://127.0.0.1:${port}`, "--proxy-bypass-list=<-loopback>"],
    get online() {
      return online;
    },
    get seen() {
      return seen;
    },
    setOnline(v: boolean) {
      online = v;
      if (!v) for (const s of sockets) s.destroy();
    },
    close: () =>
      new Promise<void>((res) => {
        for (const s of sockets) s.destroy();
        server.close(() => res());
      }),
  };
}
