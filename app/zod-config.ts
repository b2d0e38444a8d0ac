// Imported first by app/root.tsx, before any schema is built: Zod's compiled fast path probes
// `new Function`, which the Content-Security-Policy forbids (no 'unsafe-eval'), and the probe
// is reported as a CSP violation even though Zod falls back. Jitless skips the probe.
import { config } from "zod/v4/core";

config({ jitless: true });
