/**
 * External runs in the store: written whole or not at all, read back with a `source` block, indexed with
 * their source, and an index file from before the `source` column still opens.
 */
import Database from "better-sqlite3";
import { existsSync, readdirSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { RunIndex } from "../../src/store/index-db.js";
import { externalRunId, readRun, writeExternalRun } from "../../src/store/run-store.js";
import type { ExternalRunManifest, ExternalSourceDoc, RunSummary } from "../../src/run/schema.js";
import { tempDirsRemovedAfterAll } from "../helpers/temp-dirs.js";

const temp = tempDirsRemovedAfterAll();

const source = (sha: string): ExternalSourceDoc => ({
  inputs: ["/logs/a.csv"],
  files: [{ path: "/logs/a.csv", bytes: 10, sha256: sha }],
  format: "csv",
  mapping: { designer: "ret", intent: "ok", step: null, run: null },
  ranges: { designer: null, intent: { low: 0, high: 1 } },
  window: null,
  rolling: null,
});

function write(runsDir: string, src: ExternalSourceDoc) {
  const runId = externalRunId(src);
  const manifest: ExternalRunManifest = { format: "gapwatch-run/1", kind: "external", runId, source: src, packageVersion: "0", nodeVersion: "v20", createdAt: "2026-01-01T00:00:00Z" };
  const cp = { step: 5, episodes: 0, designer: 1, intent: 0.5, designerNorm: 1, intentNorm: 0.5, gap: 0.5, rank: null };
  const summary: RunSummary = { format: "gapwatch-run-summary/1", runId, status: "complete", verdict: "aligned", reason: "r", final: cp, alertCount: 0, firstAlertStep: null, steps: 5, episodes: 0, checkpointCount: 1, trainSeconds: 0, monitorSeconds: 0, relative: true, finishedAt: "2026-01-01T00:00:01Z" };
  return writeExternalRun(runsDir, { manifest, checkpoints: [cp], alerts: [], summary });
}

describe("external runs in the store", () => {
  it("the run id hashes content, not where the files lie; a different hash is another run", () => {
    const a = externalRunId(source("aa"));
    expect(a).toMatch(/^ext-a-[0-9a-f]{8}$/);
    expect(externalRunId({ ...source("aa"), inputs: ["/elsewhere/a.csv"], files: [{ path: "/elsewhere/a.csv", bytes: 10, sha256: "aa" }] })).toBe(a);
    expect(externalRunId(source("bb"))).not.toBe(a);
  });

  it("written through a staging folder that leaves nothing behind; read back with its source and a stand-in config", () => {
    const runs = temp("ext-store");
    const dir = write(runs, source("aa"));
    expect(readdirSync(runs)).toEqual([dir.split("/").pop()]);
    const r = readRun(dir);
    expect(r.source?.mapping.designer).toBe("ret");
    expect(r.relative).toBe(true);
    expect(r.config.env).toBe("external");
    expect(r.references.intentOptimal).toBe(1);
    expect(Number.isNaN(r.references.designerOptimal)).toBe(true);
  });

  it("an index file without the source column (older gapwatch) gains it on open and lists the external run's source", () => {
    const runs = temp("ext-index");
    const dir = write(runs, source("cc"));
    const old = new Database(join(runs, "index.db"));
    old.exec(`CREATE TABLE runs (run_id TEXT PRIMARY KEY, env TEXT NOT NULL, reward TEXT NOT NULL, learner TEXT NOT NULL, seed INTEGER NOT NULL, steps INTEGER NOT NULL,
      status TEXT NOT NULL, verdict TEXT NOT NULL, designer REAL, intent REAL, alerts INTEGER NOT NULL, run_dir TEXT NOT NULL, time TEXT NOT NULL)`);
    old.close();
    const ix = new RunIndex(runs);
    ix.recordRun(readRun(dir));
    const rows = ix.listRuns();
    ix.close();
    expect(rows).toHaveLength(1);
    expect(rows[0].source).toBe("a.csv");
    expect(existsSync(join(runs, "index.db"))).toBe(true);
  });
});
