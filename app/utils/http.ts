// Expected failures as HTTP responses: loaders and actions throw these, boundaries show them.
export function invariantResponse(condition: unknown, message: string, init: ResponseInit = { status: 400 }): asserts condition {
  if (!condition) throw new Response(message, { statusText: message.slice(0, 80), ...init });
}

/** The same for JSON resource routes: `{ "error": message }`. */
export function invariantJson(condition: unknown, message: string, status = 400): asserts condition {
  if (!condition) throw Response.json({ error: message }, { status });
}

const PROBE_ORIGIN = "http://shotbook.invalid";
// Browsers read "\" as "/" and drop tabs and newlines inside URLs, so "/\evil.example" and
// "/<tab>/evil.example" become "//evil.example" — another site. Refused before parsing.
const UNSAFE_CHARS = /[\\\u0000-\u001f\u007f]/;

/**
 * A redirect target from user input, kept on this site: only a path that resolves to this
 * origin (a single leading "/"); anything else gives the fallback.
 */
export function safeRedirect(to: FormDataEntryValue | string | null | undefined, fallback = "/") {
  const s = typeof to === "string" ? to : "";
  if (!s.startsWith("/") || s.startsWith("//") || UNSAFE_CHARS.test(s)) return fallback;
  // The same checks on the decoded form, for a value that is decoded once more on its way.
  let decoded = s;
  try {
    decoded = decodeURIComponent(s);
  } catch {
    return fallback;
  }
  if (decoded.startsWith("//") || UNSAFE_CHARS.test(decoded)) return fallback;
  let url: URL;
  try {
    url = new URL(s, PROBE_ORIGIN);
  } catch {
    return fallback;
  }
  if (url.origin !== PROBE_ORIGIN || !url.pathname.startsWith("/") || url.pathname.startsWith("//")) return fallback;
  return url.pathname + url.search + url.hash;
}
