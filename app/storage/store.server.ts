// Where file content (photos now, scan files later) lives. The embedded default is a folder
// under DATA_DIR on this machine; with STORAGE_URL=s3://bucket?endpoint=…, an S3-compatible
// object store that every app instance reaches, so two instances serve each other's files.
// Keys are ours (a uuid and an extension, under a prefix such as "photos/"), never a path
// taken from a request.
import { getEnv } from "~/env.server";
import { LocalFolderStore } from "./local.server";
import { S3Store } from "./s3.server";
import { parseStorageUrl } from "./url";

export type StoredObject = {
  /** The bytes as a web stream (the response body as it is). */
  body: ReadableStream<Uint8Array>;
  bytes: number;
};

export interface ObjectStore {
  /** Writes the whole stream under key; the key shows only once the write is complete. */
  put(key: string, body: ReadableStream<Uint8Array>, meta: { contentType: string; bytes: number }): Promise<void>;
  /** The object, or null when there is none under key. */
  get(key: string): Promise<StoredObject | null>;
  delete(key: string): Promise<void>;
  /** For logs and the cluster banner: where the files go (no secrets). */
  readonly where: string;
}

const stores = new Map<string, ObjectStore>();

/** The store of this process's environment: STORAGE_URL when set, else DATA_DIR's folder. */
export function getStore(): ObjectStore {
  const env = getEnv();
  const id = env.STORAGE_URL ?? `file:${env.DATA_DIR}`;
  let s = stores.get(id);
  if (!s) {
    s = env.STORAGE_URL
      ? new S3Store(parseStorageUrl(env.STORAGE_URL), { accessKeyId: env.STORAGE_ACCESS_KEY_ID, secretAccessKey: env.STORAGE_SECRET_ACCESS_KEY })
      : new LocalFolderStore(env.DATA_DIR);
    stores.set(id, s);
  }
  return s;
}
