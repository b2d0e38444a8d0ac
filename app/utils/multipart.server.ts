// Multipart bodies streamed to disk (api.md: scans 512 MB streamed to disk, 413 beyond, nothing
// buffered past the cap). busboy parses the stream; each file part goes to a temporary file
// while its SHA-256 is computed on the way, so a 200 MB scan never sits in memory.
import { createHash } from "node:crypto";
import { createWriteStream } from "node:fs";
import { mkdtemp, rm } from "node:fs/promises";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { Readable } from "node:stream";
import busboy from "busboy";

/** `type` is the part's declared Content-Type (busboy says "text/plain" when the part gives none). */
export type UploadedFile = { field: string; filename: string; path: string; bytes: number; sha256: string; type: string };
export type Multipart = { fields: Map<string, string>; files: UploadedFile[]; dir: string };
/** `limit` says which cap a 413 passed: the files' bytes, or the whole body with its framing. */
export type MultipartError = { status: 400 | 413; error: string; limit?: "files" | "body" };

/** Room for the boundaries and the small text fields around the files. */
const OVERHEAD = 256 * 1024;

export class UploadTooLarge extends Error {
  constructor(
    message: string,
    readonly limit: "files" | "body",
  ) {
    super(message);
  }
}

/**
 * The body as pulled, at most `limit` bytes: past it the source is cancelled and the stream
 * errors. Counted here, before any buffering, so a body with no part boundary (which busboy
 * would skip as preamble for ever) is stopped too, one chunk past the cap at most.
 */
function capped(body: ReadableStream<Uint8Array>, limit: number, message: string): ReadableStream<Uint8Array> {
  const reader = body.getReader();
  let total = 0;
  return new ReadableStream<Uint8Array>(
    {
      async pull(controller) {
        const { done, value } = await reader.read();
        if (done) return controller.close();
        total += value.byteLength;
        if (total > limit) {
          await reader.cancel().catch(() => undefined);
          controller.error(new UploadTooLarge(message, "body"));
          return;
        }
        controller.enqueue(value);
      },
      cancel(reason) {
        return reader.cancel(reason);
      },
    },
    { highWaterMark: 0 },
  );
}

const closed = (s: import("node:fs").WriteStream) => (s.closed ? Promise.resolve() : new Promise<void>((r) => s.once("close", () => r())));

/**
 * Parses a multipart request, files to a fresh temporary folder (remove it with `discard`).
 * `maxBytes` caps the files together; text fields are capped at 64 KB each. `maxBodyBytes`
 * (default `maxBytes` + 256 KB) caps the whole body, framing included, by its declared length
 * before reading and by the bytes pulled while streaming.
 */
export async function receiveMultipart(request: Request, opts: { maxBytes: number; maxFiles: number; maxBodyBytes?: number }): Promise<Multipart | MultipartError> {
  const type = request.headers.get("Content-Type") ?? "";
  if (!type.toLowerCase().startsWith("multipart/form-data")) return { status: 400, error: "Send multipart/form-data." };
  const bodyCap = opts.maxBodyBytes ?? opts.maxBytes + OVERHEAD;
  const tooLarge = `The upload is larger than ${Math.round(opts.maxBytes / 1048576)} MB.`;
  const declared = Number(request.headers.get("Content-Length") ?? NaN);
  if (Number.isFinite(declared) && declared > bodyCap) {
    await request.body?.cancel().catch(() => undefined);
    return { status: 413, error: tooLarge, limit: "body" };
  }
  if (!request.body) return { status: 400, error: "The request has no body." };
  const dir = await mkdtemp(join(tmpdir(), "shotbook-upload-"));
  const fields = new Map<string, string>();
  const files: UploadedFile[] = [];
  const outs: import("node:fs").WriteStream[] = [];
  let total = 0;
  const source = Readable.fromWeb(capped(request.body, bodyCap, tooLarge) as import("node:stream/web").ReadableStream<Uint8Array>);
  try {
    await new Promise<void>((resolve, reject) => {
      let bb: busboy.Busboy;
      try {
        bb = busboy({ headers: { "content-type": type }, limits: { fieldSize: 64 * 1024, files: opts.maxFiles, fields: 50 } });
      } catch (e) {
        reject(new Error(`The multipart body cannot be read: ${(e as Error).message}`));
        return;
      }
      const pending: Promise<void>[] = [];
      let count = 0;
      let failed = false;
      const fail = (e: Error) => {
        if (failed) return;
        failed = true;
        source.unpipe(bb);
        source.destroy();
        // no half-written file left open once the request is refused
        for (const o of outs) o.destroy();
        reject(e);
      };
      bb.on("field", (name, value) => fields.set(name, value));
      bb.on("filesLimit", () => fail(new Error(`At most ${opts.maxFiles} files in one request.`)));
      bb.on("file", (field, stream, info) => {
        const path = join(dir, `${count++}.bin`);
        const hash = createHash("sha256");
        const out = createWriteStream(path);
        outs.push(out);
        let bytes = 0;
        stream.on("data", (chunk: Buffer) => {
          bytes += chunk.length;
          total += chunk.length;
          if (total > opts.maxBytes) {
            stream.resume();
            out.destroy();
            fail(new UploadTooLarge(tooLarge, "files"));
            return;
          }
          hash.update(chunk);
        });
        const done = new Promise<void>((res, rej) => {
          out.on("finish", () => {
            files.push({ field, filename: info.filename ?? "", path, bytes, sha256: hash.digest("hex"), type: info.mimeType ?? "" });
            res();
          });
          out.on("error", rej);
          stream.on("error", rej);
        });
        // a refused request never awaits its parts: their errors are the refusal's, not unhandled
        done.catch(() => undefined);
        pending.push(done);
        stream.pipe(out);
      });
      bb.on("error", (e) => fail(e instanceof Error ? e : new Error(String(e))));
      bb.on("close", () => {
        Promise.all(pending).then(() => (failed ? undefined : resolve()), fail);
      });
      source.on("error", (e) => fail(e));
      source.pipe(bb);
    });
  } catch (e) {
    await Promise.all(outs.map(closed));
    await rm(dir, { recursive: true, force: true });
    if (e instanceof UploadTooLarge) return { status: 413, error: e.message, limit: e.limit };
    return { status: 400, error: e instanceof Error ? e.message : "The multipart body cannot be read." };
  }
  // keep the files in the order they came
  files.sort((a, b) => a.path.localeCompare(b.path, undefined, { numeric: true }));
  return { fields, files, dir };
}

export async function discard(m: Multipart) {
  await rm(m.dir, { recursive: true, force: true });
}
