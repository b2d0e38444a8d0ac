// The server entry: React Router's default Node entry, plus the boot-time environment check.
import { PassThrough } from "node:stream";

import type { AppLoadContext, EntryContext, RouterContextProvider } from "react-router";
import { createReadableStreamFromReadable } from "@react-router/node";
import { ServerRouter } from "react-router";
import { isbot } from "isbot";
import type { RenderToPipeableStreamOptions } from "react-dom/server";
import { renderToPipeableStream } from "react-dom/server";
import { getEnv } from "~/env.server";
import { ensureCertificateTimer } from "~/models/certificates.server";
import { startReportPool } from "~/models/report-pool.server";
import { warmReports } from "~/models/reports.server";
import { NonceContext } from "~/components/nonce";
import { nonceContext } from "~/http/security.server";

// Validate the environment when the server bundle loads, so a production server with a
// missing or published SESSION_SECRET refuses to start instead of serving forgeable sessions.
getEnv();
// The certificate due-date mail (ranging.md §7) is checked at server start and every few hours;
// started here, not on import, so command-line tools that load the models start no timer.
ensureCertificateTimer();
// issue 16: the report worker threads start with the server, so the first report does not wait for
// them; app/cli/serve.ts listens once they are warm.
export const serverReady: Promise<unknown> = Promise.all([startReportPool(), warmReports().catch((e) => console.error("report: the warm-up of the request thread failed", e))]);

// app/cli/serve.ts sets the socket address under this key (it must be this module graph's key).
export { clientAddressContext } from "~/http/client-address.server";

export const streamTimeout = 5_000;

export default function handleRequest(request: Request, responseStatusCode: number, responseHeaders: Headers, routerContext: EntryContext, loadContext: AppLoadContext) {
  // Set by the security middleware for this request; the CSP header allows scripts with it.
  let nonce = "";
  try {
    nonce = (loadContext as unknown as RouterContextProvider).get(nonceContext);
  } catch {}
  // https://httpwg.org/specs/rfc9110.html#HEAD
  if (request.method.toUpperCase() === "HEAD") {
    return new Response(null, {
      status: responseStatusCode,
      headers: responseHeaders,
    });
  }

  return new Promise((resolve, reject) => {
    let shellRendered = false;
    const userAgent = request.headers.get("user-agent");

    // Ensure requests from bots and SPA Mode renders wait for all content to load before responding
    // https://react.dev/reference/react-dom/server/renderToPipeableStream#waiting-for-all-content-to-load-for-crawlers-and-static-generation
    const readyOption: keyof RenderToPipeableStreamOptions = (userAgent && isbot(userAgent)) || routerContext.isSpaMode ? "onAllReady" : "onShellReady";

    // Abort the rendering stream after the `streamTimeout` so it has time to
    // flush down the rejected boundaries
    let timeoutId: ReturnType<typeof setTimeout> | undefined = setTimeout(() => abort(), streamTimeout + 1000);

    const { pipe, abort } = renderToPipeableStream(
      <NonceContext.Provider value={nonce}>
        <ServerRouter context={routerContext} url={request.url} nonce={nonce} />
      </NonceContext.Provider>,
      {
        nonce,
        [readyOption]() {
          shellRendered = true;
          const body = new PassThrough({
            final(callback) {
              // Clear the timeout to prevent retaining the closure and memory leak
              clearTimeout(timeoutId);
              timeoutId = undefined;
              callback();
            },
          });
          const stream = createReadableStreamFromReadable(body);

          responseHeaders.set("Content-Type", "text/html");

          pipe(body);

          resolve(
            new Response(stream, {
              headers: responseHeaders,
              status: responseStatusCode,
            }),
          );
        },
        onShellError(error: unknown) {
          reject(error);
        },
        onError(error: unknown) {
          responseStatusCode = 500;
          // Log streaming rendering errors from inside the shell.  Don't log
          // errors encountered during initial shell rendering since they'll
          // reject and get logged in handleDocumentRequest.
          if (shellRendered) {
            console.error(error);
          }
        },
      },
    );
  });
}
