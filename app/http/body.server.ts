// Every request body is read through here, with a cap checked before reading (Content-Length)
// and again while streaming (a chunked body has no length): past the cap the read stops and the
// request gets 413, so nothing beyond the cap is ever buffered (api.md; issue 11).

/** Caps in bytes. Forms carry a few fields; the others follow api.md. */
export const BODY_LIMITS = {
  /** Sign-in, sign-out, theme and every admin/registry HTML form. */
  form: 16 * 1024,
  /** POST /api/sync (api.md: 8 MB). */
  sync: 8_000_000,
  /** POST /review/import/chunk: one chunk of a CSV import. */
  importChunk: 8_000_000,
  /**
   * The site forms: a site may have 200 targets of ~10 fields each (~300 bytes a row), which
   * does not fit the 16 KB of the other forms.
   */
  siteForm: 128 * 1024,
  /** JSON bodies of the registry API (a site with 200 targets is ~50 KB). */
  registryJson: 256 * 1024,
} as const;

/** Room for the multipart boundaries and the other fields around a photo (api.md: photos 8 MiB). */
export const MULTIPART_OVERHEAD = 64 * 1024;

function sizeText(bytes: number) {
  return bytes >= 1024 * 1024 ? `${(bytes / (1024 * 1024)).toFixed(bytes % (1024 * 1024) ? 1 : 0)} MiB` : `${Math.round(bytes / 1024)} KB`;
}

/** The 413 answer: JSON for the API and the import chunk, plain text for pages. */
export function tooLarge(request: Request, limit: number): Response {
  const message = `The request body is larger than ${sizeText(limit)} (${limit} bytes), the most this address accepts.`;
  const path = new URL(request.url).pathname;
  const json = path.startsWith("/api/") || path.endsWith("/chunk") || (request.headers.get("Accept") ?? "").includes("application/json");
  return json ? Response.json({ error: message }, { status: 413 }) : new Response(message, { status: 413, statusText: "Content Too Large", headers: { "Content-Type": "text/plain; charset=utf-8" } });
}

/**
 * The body's bytes, at most `limit` of them. Throws the 413 Response when the declared length
 * or the bytes actually sent pass the cap; the stream is cancelled there, unread.
 */
export async function readBodyCapped(request: Request, limit: number): Promise<Uint8Array<ArrayBuffer>> {
  const declared = request.headers.get("Content-Length");
  if (declared !== null && Number(declared) > limit) {
    await request.body?.cancel().catch(() => undefined);
    throw tooLarge(request, limit);
  }
  if (!request.body) return new Uint8Array(0);
  const reader = request.body.getReader();
  const chunks: Uint8Array[] = [];
  let total = 0;
  for (;;) {
    const { done, value } = await reader.read();
    if (done) break;
    total += value.byteLength;
    if (total > limit) {
      await reader.cancel().catch(() => undefined);
      throw tooLarge(request, limit);
    }
    chunks.push(value);
  }
  const out = new Uint8Array(total);
  let at = 0;
  for (const c of chunks) {
    out.set(c, at);
    at += c.byteLength;
  }
  return out;
}

export async function readTextCapped(request: Request, limit: number) {
  return new TextDecoder().decode(await readBodyCapped(request, limit));
}

/** JSON.parse errors propagate (callers answer 400); too large throws the 413 Response. */
export async function readJsonCapped(request: Request, limit: number): Promise<unknown> {
  return JSON.parse(await readTextCapped(request, limit));
}

/** A form (urlencoded or multipart) read within the cap; forms default to 16 KB. */
export async function readFormCapped(request: Request, limit: number = BODY_LIMITS.form): Promise<FormData> {
  const bytes = await readBodyCapped(request, limit);
  const type = request.headers.get("Content-Type") ?? "application/x-www-form-urlencoded";
  return new Response(bytes, { headers: { "Content-Type": type } }).formData();
}
