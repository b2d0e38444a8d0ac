// Expected failures as HTTP responses: loaders and actions throw these, boundaries show them.
export function invariantResponse(
  condition: unknown,
  message: string,
  init: ResponseInit = { status: 400 },
): asserts condition {
  if (!condition) throw new Response(message, { statusText: message.slice(0, 80), ...init });
}

/** The same for JSON resource routes: `{ "error": message }`. */
export function invariantJson(condition: unknown, message: string, status = 400): asserts condition {
  if (!condition) throw Response.json({ error: message }, { status });
}

/** A redirect target from user input, kept on this site. */
export function safeRedirect(to: FormDataEntryValue | string | null | undefined, fallback = "/") {
  const s = typeof to === "string" ? to : "";
  return s.startsWith("/") && !s.startsWith("//") ? s : fallback;
}
