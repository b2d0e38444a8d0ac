// An S3-compatible object store through the AWS SDK. STORAGE_URL names the bucket and, for a
// store that is not AWS itself, its endpoint:
//   s3://shotbook?endpoint=http://127.0.0.1:4569&forcePathStyle=true&region=us-east-1
// The keys come from STORAGE_ACCESS_KEY_ID / STORAGE_SECRET_ACCESS_KEY (else the SDK's own
// chain: environment, profile, instance role). Uploads stream in parts (lib-storage).
import { DeleteObjectCommand, GetObjectCommand, NoSuchKey, S3Client } from "@aws-sdk/client-s3";
import { Upload } from "@aws-sdk/lib-storage";
import { Readable } from "node:stream";
import { safeKey } from "./local.server";
import type { ObjectStore, StoredObject } from "./store.server";
import type { S3Location } from "./url";

export class S3Store implements ObjectStore {
  readonly client: S3Client;
  constructor(
    readonly loc: S3Location,
    keys: { accessKeyId?: string; secretAccessKey?: string } = {},
  ) {
    this.client = new S3Client({
      region: loc.region,
      endpoint: loc.endpoint,
      forcePathStyle: loc.forcePathStyle,
      credentials: keys.accessKeyId && keys.secretAccessKey ? { accessKeyId: keys.accessKeyId, secretAccessKey: keys.secretAccessKey } : undefined,
    });
  }
  get where() {
    return `s3://${this.loc.bucket}/${this.loc.prefix}${this.loc.endpoint ? ` at ${this.loc.endpoint}` : ""}`;
  }
  key(key: string) {
    return `${this.loc.prefix}${safeKey(key)}`;
  }
  async put(key: string, body: ReadableStream<Uint8Array>, meta: { contentType: string; bytes: number }) {
    // S3 shows an object only once its upload completes: no half file under the key
    const up = new Upload({
      client: this.client,
      params: { Bucket: this.loc.bucket, Key: this.key(key), Body: Readable.fromWeb(body as never), ContentType: meta.contentType },
      queueSize: 2,
    });
    await up.done();
  }
  async get(key: string): Promise<StoredObject | null> {
    try {
      const r = await this.client.send(new GetObjectCommand({ Bucket: this.loc.bucket, Key: this.key(key) }));
      if (!r.Body) return null;
      return { body: r.Body.transformToWebStream() as ReadableStream<Uint8Array>, bytes: Number(r.ContentLength ?? NaN) };
    } catch (e) {
      if (e instanceof NoSuchKey || (e as { name?: string }).name === "NoSuchKey") return null;
      throw e;
    }
  }
  async delete(key: string) {
    await this.client.send(new DeleteObjectCommand({ Bucket: this.loc.bucket, Key: this.key(key) }));
  }
}
