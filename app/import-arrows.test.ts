// The import arrows of app/ (issue 13): routes → models → domain; offline → contract → domain;
// components never reach the database or the models. Every import of every source file is read
// (static `import … from`, `export … from`, dynamic `import()`), resolved to its folder under app/,
// and checked against the table below, so a forbidden arrow fails here instead of creeping in.
import { readdirSync, readFileSync, statSync } from "node:fs";
import { dirname, join, relative, resolve } from "node:path";
import { expect, test } from "vitest";

const APP = resolve(__dirname);

/** Folder (first segment under app/) → folders it must never import. */
const FORBIDDEN: Record<string, string[]> = {
  // the ranging core is pure: nothing of the application
  domain: ["contract", "models", "db", "routes", "components", "offline", "auth", "http", "mail", "storage", "cli", "seed", "scan", "utils"],
  // shared by the tablet and the server: the domain only
  contract: ["models", "db", "routes", "components", "offline", "auth", "http", "mail", "storage", "cli", "seed", "scan", "utils"],
  // the tablet: contract and domain, never a server folder
  offline: ["models", "db", "routes", "components", "auth", "http", "mail", "storage", "cli", "seed"],
  // what a screen draws with: never the database or the models
  components: ["models", "db", "routes", "cli", "seed"],
  // data access: never the screens above it
  models: ["routes", "components", "cli"],
  // the seed's pure builders and scenario run in tests and the browser too
  seed: ["routes", "components", "offline"],
};

function sourceFiles(dir: string): string[] {
  return readdirSync(dir).flatMap((name) => {
    const p = join(dir, name);
    if (statSync(p).isDirectory()) return name === "+types" ? [] : sourceFiles(p);
    return /\.(ts|tsx)$/.test(name) && !/\.test\.tsx?$/.test(name) ? [p] : [];
  });
}

const IMPORT = /(?:^|[\s;])(?:import|export)\s[^'"]*?from\s*["']([^"']+)["']|(?:^|[\s;(])import\s*\(\s*["']([^"']+)["']\s*\)|^\s*import\s+["']([^"']+)["']/gm;

/** The specifiers a file imports (type-only imports count too: they still tie the layers). */
export function importsOf(text: string): string[] {
  return [...text.matchAll(IMPORT)].map((m) => (m[1] ?? m[2] ?? m[3])!);
}

/** The app/ folder a specifier lands in, or null for a package. */
function folderOf(spec: string, from: string): string | null {
  let target: string;
  if (spec.startsWith("~/")) target = join(APP, spec.slice(2));
  else if (spec.startsWith(".")) target = resolve(dirname(from), spec);
  else return null;
  const rel = relative(APP, target);
  if (rel.startsWith("..")) return null;
  return rel.split(/[\\/]/)[0]!.replace(/\.(tsx?|js)$/, "");
}

function forbiddenArrows(): string[] {
  const out: string[] = [];
  for (const file of sourceFiles(APP)) {
    const from = relative(APP, file).split(/[\\/]/)[0]!;
    const banned = FORBIDDEN[from];
    if (!banned) continue;
    for (const spec of importsOf(readFileSync(file, "utf8"))) {
      const to = folderOf(spec, file);
      if (to && to !== from && banned.includes(to)) out.push(`${relative(APP, file)} → ${spec}`);
    }
  }
  return out.sort();
}

test("the import reader sees static, re-exported, type-only and dynamic imports (and no package as a folder)", () => {
  const text = [
    'import { a } from "~/models/x";',
    'import type { B } from "../db/schema";',
    'export * from "~/contract/sync";',
    'const m = await import("~/routes/y");',
    'import "./side-effect";',
    'import { z } from "zod";',
  ].join("\n");
  expect(importsOf(text)).toEqual(["~/models/x", "../db/schema", "~/contract/sync", "~/routes/y", "./side-effect", "zod"]);
  expect(folderOf("zod", join(APP, "offline/a.ts"))).toBeNull();
  expect(folderOf("../db/schema", join(APP, "components/shell.tsx"))).toBe("db");
  expect(folderOf("~/root", join(APP, "routes/a.tsx"))).toBe("root");
});

test("no forbidden arrow between the folders of app/", () => {
  expect(forbiddenArrows()).toEqual([]);
});

// Issue 13: models, the domain and the contract never build an HTTP answer; they throw AppError
// (app/contract/errors.ts) and the routes answer with app/http/app-error.server.ts. Comments aside.
const BUILDS_RESPONSE = /\bResponse\.json\(|\bnew Response\(|\bResponse\.redirect\(/;
/** Files not yet moved to AppError (none left: issue 16 moved the report read path). */
const NOT_YET: string[] = [];

export function buildsResponse(text: string): boolean {
  return text.split("\n").some((line) => !/^\s*(\/\/|\*)/.test(line) && BUILDS_RESPONSE.test(line));
}

test("the response check sees a thrown or returned Response and ignores comments", () => {
  expect(buildsResponse('  throw Response.json({ error: "x" }, { status: 403 });')).toBe(true);
  expect(buildsResponse("  return new Response(body);")).toBe(true);
  expect(buildsResponse('  throw new AppError(403, "x");')).toBe(false);
  expect(buildsResponse(" * a JSON Response (400/404): Response.json(…)")).toBe(false);
});

test("models, the domain and the contract never build a Response", () => {
  const offenders = ["models", "domain", "contract"]
    .flatMap((dir) => sourceFiles(join(APP, dir)))
    .map((f) => relative(APP, f))
    .filter((rel) => !NOT_YET.includes(rel) && buildsResponse(readFileSync(join(APP, rel), "utf8")));
  expect(offenders).toEqual([]);
});
