// The embedded default: files in a folder under DATA_DIR, written then renamed so a crash
// never leaves a half file under its final name.
import { createReadStream, createWriteStream } from "node:fs";
import { mkdir, rename, rm, stat } from "node:fs/promises";
import { dirname, join, resolve } from "node:path";
import { Readable, Writable } from "node:stream";
import type { ObjectStore, StoredObject } from "./store.server";

/** A key is one or two plain names ("photos/<uuid>.jpg"): nothing that climbs out of the folder. */
export function safeKey(key: string): string {
  const parts = key.split("/");
  if (!parts.length || parts.some((p) => !p || p === "." || p === ".." || p.includes("\\"))) throw new Error(`Not a storage key: ${key}`);
  return parts.join("/");
}

export class LocalFolderStore implements ObjectStore {
  readonly root: string;
  constructor(dataDir: string) {
    this.root = resolve(dataDir);
  }
  get where() {
    return `folder ${this.root}`;
  }
  path(key: string) {
    return join(this.root, safeKey(key));
  }
  async put(key: string, body: ReadableStream<Uint8Array>, _meta: { contentType: string; bytes: number }) {
    const final = this.path(key);
    await mkdir(dirname(final), { recursive: true });
    const tmp = join(dirname(final), `.${crypto.randomUUID()}.tmp`);
    try {
      await body.pipeTo(Writable.toWeb(createWriteStream(tmp)) as WritableStream<Uint8Array>);
      await rename(tmp, final);
    } catch (e) {
      await rm(tmp, { force: true });
      throw e;
    }
  }
  async get(key: string): Promise<StoredObject | null> {
    const p = this.path(key);
    let bytes: number;
    try {
      bytes = (await stat(p)).size;
    } catch (e) {
      if ((e as { code?: string }).code === "ENOENT") return null;
      throw e;
    }
    return { body: Readable.toWeb(createReadStream(p)) as ReadableStream<Uint8Array>, bytes };
  }
  async delete(key: string) {
    await rm(this.path(key), { force: true });
  }
}
