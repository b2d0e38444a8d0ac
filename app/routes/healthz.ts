import { getDb } from "~/db/client.server";

export async function loader() {
  try {
    await getDb().$client.execute("SELECT 1");
    return Response.json({ ok: true }, { headers: { "Cache-Control": "no-store" } });
  } catch (error) {
    return Response.json({ ok: false, error: "The database does not answer." }, { status: 503 });
  }
}
