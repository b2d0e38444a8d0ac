// npm start (after the migrations): serves the production build as react-router-serve does
// (compression, immutable /assets, public/, request log), plus one thing it cannot: the TCP
// peer's address in each request's context, for the per-client sign-in limits (issue 11;
// app/http/client-address.server.ts). Usage: tsx app/cli/serve.ts [build/server/index.js]
import { resolve, join, dirname } from "node:path";
import { pathToFileURL } from "node:url";
import { createRequestHandler } from "@react-router/express";
import compression from "compression";
import express from "express";
import morgan from "morgan";
import { RouterContextProvider, type ServerBuild } from "react-router";
import { getEnv } from "~/env.server";

process.env.NODE_ENV ??= "production";
try {
  getEnv(); // refuse to start on a bad environment (e.g. a published SESSION_SECRET), with the reason
} catch (e) {
  console.error((e as Error).message);
  process.exit(1);
}

const buildPath = resolve(process.argv[2] ?? join(process.env.RR_BUILD_DIR ?? "build", "server/index.js"));
const build = (await import(pathToFileURL(buildPath).href)) as ServerBuild;
// The context key lives in the build's own module graph; app/entry.server.tsx hands it out.
const { clientAddressContext } = build.entry.module as unknown as { clientAddressContext: Parameters<RouterContextProvider["set"]>[0] };
const clientDir = resolve(dirname(buildPath), "../client");

const app = express();
app.disable("x-powered-by");
app.use(compression());
// Static files skip the app's middleware (app/http/security.server.ts sets the rest there).
const setHeaders = (res: express.Response) => res.setHeader("X-Content-Type-Options", "nosniff");
app.use("/assets", express.static(join(clientDir, "assets"), { immutable: true, maxAge: "1y", setHeaders }));
app.use(express.static(clientDir, { setHeaders }));
app.use(express.static("public", { maxAge: "1h", setHeaders }));
app.use(morgan("tiny"));
app.all(
  "*",
  createRequestHandler({
    build,
    mode: process.env.NODE_ENV,
    getLoadContext(req) {
      const context = new RouterContextProvider();
      context.set(clientAddressContext, req.socket.remoteAddress ?? null);
      return context;
    },
  }),
);

// issue 16, for `npm run bench`: with SHOTBOOK_LOOP_STATS=1, SIGUSR2 prints how long the event
// loop was held since the previous signal (node:perf_hooks, sampled every 5 ms), then resets.
if (process.env.SHOTBOOK_LOOP_STATS === "1") {
  const { monitorEventLoopDelay } = await import("node:perf_hooks");
  const loop = monitorEventLoopDelay({ resolution: 5 });
  loop.enable();
  process.on("SIGUSR2", () => {
    const ms = (ns: number) => Math.round(ns / 1e4) / 100;
    console.log(`[loop] ${JSON.stringify({ maxMs: ms(loop.max), p99Ms: ms(loop.percentile(99)), p50Ms: ms(loop.percentile(50)), meanMs: ms(loop.mean), samples: loop.count })}`);
    loop.reset();
  });
}

// issue 16: listen once the build's worker threads are warm (app/entry.server.tsx serverReady), so
// no first request shares the CPU with their start; never more than 15 s for it
const ready = (build.entry.module as unknown as { serverReady?: Promise<unknown> }).serverReady;
if (ready) await Promise.race([ready, new Promise((r) => setTimeout(r, 15_000).unref())]);

const port = Number(process.env.PORT ?? 3000);
const host = process.env.HOST;
const onListen = () => console.log(`[shotbook] http://${host ?? "localhost"}:${port}`);
const server = host ? app.listen(port, host, onListen) : app.listen(port, onListen);
for (const signal of ["SIGTERM", "SIGINT"] as const) process.once(signal, () => server.close(() => process.exit(0)));
