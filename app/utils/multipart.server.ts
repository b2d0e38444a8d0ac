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

export type UploadedFile = { field: string; filename: string; path: string; bytes: number; sha256: string };
export type Multipart = { fields: Map<string, string>; files: UploadedFile[]; dir: string };
export type MultipartError = { status: 400 | 413; error: string };

/** Room for the boundaries and the small text fields around the files. */
const OVERHEAD = 256 * 1024;

export class UploadTooLarge extends Error {}

/**
 * Parses a multipart request, files to a fresh temporary folder (remove it with `discard`).
 * `maxBytes` caps the files together; text fields are capped at 64 KB each.
 */
export async function receiveMultipart(request: Request, opts: { maxBytes: number; maxFiles: number }): Promise<Multipart | MultipartError> {
  const type = request.headers.get("Content-Type") ?? "";
  if (!type.toLowerCase().startsWith("multipart/form-data")) return { status: 400, error: "Send multipart/form-data." };
  const declared = Number(request.headers.get("Content-Length") ?? NaN);
  if (Number.isFinite(declared) && declared > opts.maxBytes + OVERHEAD) {
    return { status: 413, error: `The upload is larger than ${Math.round(opts.maxBytes / 1048576)} MB.` };
  }
  if (!request.body) return { status: 400, error: "The request has no body." };
  const dir = await mkdtemp(join(tmpdir(), "shotbook-upload-"));
  const fields = new Map<string, string>();
  const files: UploadedFile[] = [];
  let total = 0;
  const source = Readable.fromWeb(request.body as import("node:stream/web").ReadableStream<Uint8Array>);
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
        reject(e);
      };
      bb.on("field", (name, value) => fields.set(name, value));
      bb.on("filesLimit", () => fail(new Error(`At most ${opts.maxFiles} files in one request.`)));
      bb.on("file", (field, stream, info) => {
        const path = join(dir, `${count++}.bin`);
        const hash = createHash("sha256");
        const out = createWriteStream(path);
        let bytes = 0;
        stream.on("data", (chunk: Buffer) => {
          bytes += chunk.length;
          total += chunk.length;
          if (total > opts.maxBytes) {
            stream.resume();
            out.destroy();
            fail(new UploadTooLarge(`The upload is larger than ${Math.round(opts.maxBytes / 1048576)} MB.`));
            return;
          }
          hash.update(chunk);
        });
        pending.push(
          new Promise<void>((res, rej) => {
            out.on("finish", () => {
              files.push({ field, filename: info.filename ?? "", path, bytes, sha256: hash.digest("hex") });
              res();
            });
            out.on("error", rej);
            stream.on("error", rej);
          }),
        );
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
    await rm(dir, { recursive: true, force: true });
    if (e instanceof UploadTooLarge) return { status: 413, error: e.message };
    return { status: 400, error: e instanceof Error ? e.message : "The multipart body cannot be read." };
  }
  // keep the files in the order they came
  files.sort((a, b) => a.path.localeCompare(b.path, undefined, { numeric: true }));
  return { fields, files, dir };
}

export async function discard(m: Multipart) {
  await rm(m.dir, { recursive: true, force: true });
}
