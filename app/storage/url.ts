// STORAGE_URL, parsed without loading the AWS SDK (the env schema checks it at boot).
export type S3Location = { bucket: string; prefix: string; endpoint?: string; region: string; forcePathStyle: boolean };

/** Parses STORAGE_URL; throws a message naming what is wrong (the env schema shows it at boot). */
export function parseStorageUrl(raw: string): S3Location {
  let u: URL;
  try {
    u = new URL(raw);
  } catch {
    throw new Error(`STORAGE_URL is not a URL: ${raw}`);
  }
  if (u.protocol !== "s3:") throw new Error(`STORAGE_URL must start with s3:// (got ${u.protocol}//)`);
  const bucket = u.hostname;
  if (!/^[a-z0-9][a-z0-9.-]{1,61}[a-z0-9]$/.test(bucket)) throw new Error(`STORAGE_URL names no valid bucket (got "${bucket}")`);
  const known = new Set(["endpoint", "region", "forcePathStyle"]);
  for (const k of u.searchParams.keys()) if (!known.has(k)) throw new Error(`STORAGE_URL has an unknown option ${k} (known: ${[...known].join(", ")})`);
  const endpoint = u.searchParams.get("endpoint") ?? undefined;
  if (endpoint) {
    try {
      const e = new URL(endpoint);
      if (e.protocol !== "http:" && e.protocol !== "https:") throw new Error();
    } catch {
      throw new Error(`STORAGE_URL's endpoint must be an http(s) URL (got ${endpoint})`);
    }
  }
  const fps = u.searchParams.get("forcePathStyle");
  if (fps !== null && fps !== "true" && fps !== "false") throw new Error("STORAGE_URL's forcePathStyle must be true or false");
  const prefix = u.pathname.replace(/^\/+|\/+$/g, "");
  return { bucket, prefix: prefix ? `${prefix}/` : "", endpoint, region: u.searchParams.get("region") ?? "us-east-1", forcePathStyle: fps === "true" };
}
