// Fixed-window counters in the rate_limits table, so every app instance sharing one libSQL
// database counts together. One upsert per hit: atomic without a transaction.
import { getDb } from "~/db/client.server";

export type RateLimitResult = { allowed: boolean; count: number; limit: number; retryAfterS: number };

export async function hitRateLimit(key: string, limit: number, windowMs: number, now = new Date()): Promise<RateLimitResult> {
  const t = now.getTime();
  const start = Math.floor(t / windowMs) * windowMs;
  const windowStart = new Date(start).toISOString();
  const client = getDb().$client;
  const rs = await client.execute({
    sql: `INSERT INTO rate_limits (key, window_start, count) VALUES (?, ?, 1)
          ON CONFLICT (key, window_start) DO UPDATE SET count = count + 1
          RETURNING count`,
    args: [key, windowStart],
  });
  const count = Number(rs.rows[0]?.count ?? 1);
  // Old windows are of no use; dropping them here keeps the table small.
  if (count === 1) {
    await client.execute({ sql: "DELETE FROM rate_limits WHERE window_start < ?", args: [new Date(t - 86400_000).toISOString()] });
  }
  return { allowed: count <= limit, count, limit, retryAfterS: Math.max(1, Math.ceil((start + windowMs - t) / 1000)) };
}
