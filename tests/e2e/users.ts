import type { Role } from "~/db/schema";

export const TEST_USERS: { email: string; name: string; role: Role }[] = [
  { email: "admin@e2e.test", name: "Test Admin", role: "admin" },
  { email: "qa@e2e.test", name: "Test QA", role: "qa" },
  { email: "crew@e2e.test", name: "Test Crew", role: "crew" },
  { email: "viewer@e2e.test", name: "Test Viewer", role: "viewer" },
];
