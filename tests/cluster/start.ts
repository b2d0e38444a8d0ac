// Starts `app/cli/cluster.ts --json` (what `npm run cluster` runs after its build) with free
// ports under tests/.tmp, and stops it — and every process it started — at the end.
import { spawn, type ChildProcess } from "node:child_process";
import { existsSync, rmSync } from "node:fs";
import { resolve } from "node:path";

export type ClusterInfo = {
  apps: { url: string; databaseUrl: string; dataDir: string }[];
  primaryUrl: string;
  replicaUrl: string;
  storageUrl: string;
  tokens: Record<"admin" | "qa" | "crew" | "viewer", string>;
  pids: number[];
};

export type Cluster = ClusterInfo & { stop: () => Promise<void> };

const alive = (pid: number) => {
  try {
    process.kill(pid, 0);
    return true;
  } catch {
    return false;
  }
};

export async function startCluster(): Promise<Cluster> {
  const root = process.cwd();
  if (!existsSync(resolve(root, process.env.RR_BUILD_DIR ?? "build", "server/index.js"))) {
    throw new Error("No build found: run `npm run build` before the cluster test (npm test does).");
  }
  const dir = resolve(root, `tests/.tmp/cluster-${process.pid}`);
  const child: ChildProcess = spawn(process.execPath, [resolve(root, "node_modules/tsx/dist/cli.mjs"), "app/cli/cluster.ts", "--port", "0", "--dir", dir, "--json"], {
    cwd: root,
    env: { ...process.env, NODE_ENV: "production" },
    stdio: ["ignore", "pipe", "pipe"],
  });
  let out = "";
  let err = "";
  child.stderr!.on("data", (d: Buffer) => (err = (err + d.toString()).slice(-4000)));
  const info = await new Promise<ClusterInfo>((res, rej) => {
    child.stdout!.on("data", (d: Buffer) => {
      out += d.toString();
      const line = out.split("\n").find((l) => l.startsWith("CLUSTER "));
      if (line) res(JSON.parse(line.slice("CLUSTER ".length)) as ClusterInfo);
    });
    child.once("exit", (code) => rej(new Error(`The cluster stopped before it was up (exit code ${code}).\n${err}\n${out.slice(-2000)}`)));
  });
  const stop = async () => {
    if (child.exitCode === null && child.signalCode === null) {
      const exited = new Promise((r) => child.once("exit", r));
      child.kill("SIGINT"); // what Ctrl-C sends: the cluster stops its own processes
      await Promise.race([exited, new Promise((r) => setTimeout(r, 20_000))]);
    }
    // never leave a server behind, even if the cluster program could not stop them
    for (const pid of [...info.pids, child.pid!]) if (alive(pid)) process.kill(pid, "SIGKILL");
    rmSync(dir, { recursive: true, force: true });
  };
  return { ...info, stop };
}

export { alive };
