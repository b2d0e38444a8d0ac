// Root middleware: runs around every document, data and resource request.
import type { MiddlewareFunction } from "react-router";
import { drainSignInMail, queuedSignInMails } from "~/mail/mailer.server";

/**
 * Sign-in code mails queued by the request leave once its answer is ready, so asking for a
 * code takes the same time for a known and an unknown address (issue 11).
 */
export const sendQueuedMailAfterAnswer: MiddlewareFunction<Response> = async (_args, next) => {
  const response = await next();
  if (queuedSignInMails() > 0) setImmediate(() => void drainSignInMail().catch(() => undefined));
  return response;
};
