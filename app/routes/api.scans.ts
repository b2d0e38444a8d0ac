// POST /api/scans (crew, qa, admin; api.md v1.1): multipart sessionId, stationId, file (LAS/LAZ),
// optional instrumentHeightM, searchRadiusM, minPoints, commit → { fileSha256, targets: [...] }.
// The file is streamed to a temporary file (512 MB cap, 413 beyond) and removed afterwards.
import { requireApiUser } from "~/auth/guards.server";
import { FIELD } from "~/auth/access";
import { importScan } from "~/models/scans.server";
import { SCAN_MAX_BYTES } from "~/models/scan-schemas";
import { discard, receiveMultipart } from "~/utils/multipart.server";
import type { Route } from "./+types/api.scans";

export async function action({ request }: Route.ActionArgs) {
  const user = await requireApiUser(request, FIELD);
  if (request.method !== "POST") return Response.json({ error: "Use POST." }, { status: 405, headers: { Allow: "POST" } });
  const form = await receiveMultipart(request, { maxBytes: SCAN_MAX_BYTES, maxFiles: 1 });
  if ("error" in form) return Response.json({ error: form.error }, { status: form.status });
  try {
    const file = form.files.find((f) => f.field === "file");
    const result = await importScan(user, Object.fromEntries(form.fields), file);
    return Response.json(result.body, { status: result.status, headers: { "Cache-Control": "no-store" } });
  } finally {
    await discard(form);
  }
}
