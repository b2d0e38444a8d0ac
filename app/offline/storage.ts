// How much of the tablet's storage the outbox uses, and a request that the browser keep it
// (persistent storage is not evicted under storage pressure).
export type StorageInfo = { usageBytes: number | null; quotaBytes: number | null; persisted: boolean | null };

export async function storageInfo(): Promise<StorageInfo> {
  const s = typeof navigator !== "undefined" ? navigator.storage : undefined;
  if (!s) return { usageBytes: null, quotaBytes: null, persisted: null };
  const [est, persisted] = await Promise.all([s.estimate?.().catch(() => undefined), s.persisted?.().catch(() => null)]);
  return { usageBytes: est?.usage ?? null, quotaBytes: est?.quota ?? null, persisted: persisted ?? null };
}

export async function requestPersistence(): Promise<boolean | null> {
  const s = typeof navigator !== "undefined" ? navigator.storage : undefined;
  if (!s?.persist) return null;
  if (await s.persisted?.()) return true;
  return s.persist().catch(() => false);
}

export function formatBytes(n: number | null): string {
  if (n == null) return "unknown";
  if (n < 1024) return `${n} B`;
  if (n < 1024 ** 2) return `${(n / 1024).toFixed(1)} KB`;
  if (n < 1024 ** 3) return `${(n / 1024 ** 2).toFixed(1)} MB`;
  return `${(n / 1024 ** 3).toFixed(2)} GB`;
}
