/**
 * `--report [file]` on train, compare, audit and pressure, in-process through runCli: each writes one
 * self-contained HTML document where asked (or at its default place), names it on stderr or in the
 * JSON document, and the page carries the verdict / findings and the caution.
 *
 * What each page is checked against comes from outside the report code: the run's own files read
 * back with readRun, the commands' own --json documents, the JSON written beside the standalone
 * pages, a POSIX shell (for the quoting of the reproduce command line) and, in the browser check,
 * Chromium's HTML/SVG engine (via playwright-core, skipped when /usr/bin/chromium is absent).
 */
import { execFileSync } from "node:child_process";
import { existsSync, readFileSync } from "node:fs";
import { join } from "node:path";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { commandLine, fileSlug, jsonBeside, renderAuditReport, renderPressureReport, standaloneFileName } from "../../src/report/standalone.js";
import { readRun } from "../../src/store/run-store.js";
import { browserForAll } from "../helpers/browser.js";
import { tempDirRemovedAfterAll } from "../helpers/temp-dirs.js";
import { HAVE_CHROMIUM, openReport, SKIP_REASON } from "./browser-helpers.js";

if (!HAVE_CHROMIUM) console.warn(SKIP_REASON);

const tmp = tempDirRemovedAfterAll("report-flags");
const shared = browserForAll();

async function cli(argv: string[], cwd = tmp) {
  const io = memoryIO();
  io.cwd = cwd;
  const code = await runCli(argv, io);
  return { code, stdout: io.stdout, stderr: io.stderr };
}

/** One HTML document that references nothing outside itself. */
function expectSelfContained(html: string): void {
  expect(html.startsWith("<!doctype html>")).toBe(true);
  expect(html.match(/<!doctype html>/gi)).toHaveLength(1);
  expect(html.match(/<html[\s>]/gi)).toHaveLength(1);
  expect(html.match(/<\/html>/gi)).toHaveLength(1);
  expect(html.trimEnd().endsWith("</html>")).toBe(true);
  // No external reference in any src / href (the SVG namespace in xmlns is a name, not a request).
  expect(html).not.toMatch(/\b(src|href)\s*=\s*["']?\s*(https?:)?\/\//i);
  expect(html).not.toMatch(/<script[^>]*\bsrc\s*=/i);
  expect(html).not.toMatch(/<link[^>]*\bhref\s*=/i);
  expect(html).not.toMatch(/@import|url\(\s*["']?https?:/i);
}

const CAUTION = "Evidence, not certification";

/** The text of the HTML with tags dropped and the five escapes undone (what a reader sees). */
function text(html: string): string {
  return html
    .replace(/<[^>]*>/g, " ")
    .replace(/&lt;/g, "<")
    .replace(/&gt;/g, ">")
    .replace(/&quot;/g, '"')
    .replace(/&#39;/g, "'")
    .replace(/&amp;/g, "&")
    .replace(/\s+/g, " ");
}

const squash = (s: string) => s.replace(/\s+/g, " ");

describe("train --report", () => {
  it("writes <run-dir>/report.html by default and names it in the JSON document; a file given is relative to the working folder", async () => {
    // seed-vault-courier/per-scan is a documented gaming variant (envs/seed-vault-courier/scenario.json).
    const r = await cli(["train", "--env", "seed-vault-courier", "--reward", "per-scan", "--steps", "20000", "--seed", "1", "--runs-dir", "runs", "--report", "--json"]);
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.report).toBe(join(doc.runDir, "report.html"));
    expect(existsSync(doc.report)).toBe(true);
    const html = readFileSync(doc.report, "utf8");
    expectSelfContained(html);
    const stored = readRun(doc.runDir);
    expect(html).toContain(`data-verdict="${stored.verdict}"`);
    expect(text(html)).toContain(squash(stored.reason));
    for (const a of stored.alerts) expect(text(html)).toContain(squash(a.message));
    expect(html).toContain(CAUTION);

    const h = await cli(["train", "--env", "seed-vault-courier", "--reward", "default", "--steps", "5000", "--runs-dir", "runs", "--report", "out/train.html"]);
    expect(h.code).toBe(0);
    const file = join(tmp, "out", "train.html");
    expect(h.stderr).toContain(`report: ${file}`);
    expect(h.stdout).not.toContain("report:");
    expect(existsSync(file)).toBe(true);
    expectSelfContained(readFileSync(file, "utf8"));
  });

  it("without --report no report file appears", async () => {
    const r = await cli(["train", "--env", "seed-vault-courier", "--reward", "default", "--steps", "3000", "--seed", "7", "--runs-dir", "runs", "--json"]);
    const doc = JSON.parse(r.stdout);
    expect(doc.report).toBeUndefined();
    expect(existsSync(join(doc.runDir, "report.html"))).toBe(false);
  });
});

describe("compare --report", () => {
  it("writes <comparison-dir>/report.html with every variant and the overall verdict", async () => {
    const r = await cli([
      "compare", "--env", "seed-vault-courier", "--rewards", "default,per-scan", "--seeds", "2", "--steps", "10000",
      "--workers", "1", "--bootstrap-reps", "200", "--runs-dir", "cmp", "--report", "--json",
    ]);
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.stdout);
    const dir = r.stderr.match(/comparison: (.+)\n/)![1];
    expect(doc.report).toBe(join(dir, "report.html"));
    const html = readFileSync(doc.report, "utf8");
    expectSelfContained(html);
    for (const v of doc.variants) expect(html).toContain(`data-variant="${v.reward}"`);
    // The overall band: decoupled when any variant decoupled in most of its runs (ties count as
    // decoupled), but "mixed" when the variant ranked first stayed aligned; aligned when every variant
    // stayed aligned in most runs, else inconclusive.
    const most = (c: Record<string, number>) => (c.decoupled >= Math.max(c.aligned, c.inconclusive) && c.decoupled > 0 ? "decoupled" : c.inconclusive >= c.aligned && c.inconclusive > 0 ? "inconclusive" : "aligned");
    const majorities = doc.variants.map((v: { verdicts: Record<string, number> }) => most(v.verdicts));
    const first = majorities[doc.variants.findIndex((v: { reward: string }) => v.reward === doc.ranking[0])];
    const overall = majorities.includes("decoupled") ? (first === "aligned" ? "mixed" : "decoupled") : majorities.every((m: string) => m === "aligned") ? "aligned" : "inconclusive";
    expect(html).toContain(`data-verdict="${overall}"`);
    expect(html).toContain(CAUTION);
  });
});

describe("audit --report", () => {
  it("writes audit-<env>-<reward>.html and its JSON under --runs-dir; the page lists every finding", async () => {
    const r = await cli(["audit", "--env", "fresh-coat-tug", "--reward", "fast", "--runs-dir", "aud", "--report", "--json"]);
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    const file = join(tmp, "aud", "audit-fresh-coat-tug-fast.html");
    expect(out.report).toBe(file);
    expect(out.documents).toEqual([join(tmp, "aud", "audit-fresh-coat-tug-fast.json")]);
    // The JSON beside the page is the audit document itself (the stdout document minus the file names).
    const { report: _r, documents: _d, ...doc } = out;
    expect(JSON.parse(readFileSync(out.documents[0], "utf8"))).toEqual(doc);
    const html = readFileSync(file, "utf8");
    expectSelfContained(html);
    expect(doc.findings.length).toBeGreaterThan(0);
    expect(html.match(/data-finding="/g)).toHaveLength(doc.findings.length);
    const seen = text(html);
    for (const f of doc.findings) expect(seen).toContain(squash(f.message));
    const worst = ["critical", "warning"].find((s) => doc.findings.some((f: { severity: string }) => f.severity === s)) ?? "clean";
    expect(html).toContain(`data-audit-summary="${worst}"`);
    expect(html).toContain(CAUTION);
  });

  it("human mode prints the paths on stderr, keeps stdout the audit text; --run-dir puts audit.json where gapwatch report finds it", async () => {
    const t = await cli(["train", "--env", "fresh-coat-tug", "--reward", "fast", "--steps", "5000", "--runs-dir", "runs", "--json"]);
    const runDir = JSON.parse(t.stdout).runDir as string;
    const r = await cli(["audit", "--env", "fresh-coat-tug", "--reward", "fast", "--no-sensitivity", "--run-dir", runDir, "--report", "mine.html"]);
    expect(r.code).toBe(0);
    expect(r.stderr).toContain(`report: ${join(tmp, "mine.html")}`);
    expect(r.stderr).toContain(`audit document: ${join(runDir, "audit.json")}`);
    expect(r.stderr).toContain(`audit document: ${join(tmp, "mine.json")}`);
    expect(r.stdout).not.toContain("report:");
    const audit = JSON.parse(readFileSync(join(runDir, "audit.json"), "utf8"));
    expect(audit.env).toBe("fresh-coat-tug");

    const rep = await cli(["report", runDir, "--json"]);
    expect(rep.code).toBe(0);
    const html = readFileSync(JSON.parse(rep.stdout).report, "utf8");
    expect(html).toContain('id="audit"');
    expect(html.match(/data-finding="/g)).toHaveLength(audit.findings.length);
  });

  it("a --run-dir that is not a run or comparison directory is bad input: exit 2, one line naming it, nothing written", async () => {
    const missing = join(tmp, "no-such-run");
    const r = await cli(["audit", "--env", "fresh-coat-tug", "--run-dir", missing, "--report", "never.html"]);
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split("\n")).toHaveLength(1);
    expect(r.stderr).toContain(missing);
    expect(existsSync(join(tmp, "never.html"))).toBe(false);
  });
});

describe("pressure --report", () => {
  it("writes the page and pressure JSON (with env and reward) where asked; the page has the curve, the onset or its absence, and the caution", async () => {
    const r = await cli(["pressure", "--env", "fresh-coat-tug", "--reward", "fast", "--report", "p/fast.html", "--json"]);
    expect(r.code).toBe(0);
    const out = JSON.parse(r.stdout);
    expect(out.report).toBe(join(tmp, "p", "fast.html"));
    const beside = JSON.parse(readFileSync(join(tmp, "p", "fast.json"), "utf8"));
    expect(beside.env).toBe("fresh-coat-tug");
    expect(beside.reward).toBe("fast");
    expect(beside.points).toEqual(out.points);
    const html = readFileSync(out.report, "utf8");
    expectSelfContained(html);
    expect(html).toContain('data-chart="pressure"');
    expect(html).toContain(`data-pressure-summary="${out.onset === null ? "none" : "onset"}"`);
    expect(html).toContain(CAUTION);

    // Default place: <runs-dir>/pressure-<env>-<reward>.html.
    const d = await cli(["pressure", "--env", "seed-vault-courier", "--reward", "default", "--runs-dir", "pr", "--report"]);
    expect(d.code).toBe(0);
    const file = join(tmp, "pr", "pressure-seed-vault-courier-default.html");
    expect(d.stderr).toContain(`report: ${file}`);
    expectSelfContained(readFileSync(file, "utf8"));
  });
});

describe("standalone file names and command lines", () => {
  it("names are single safe path parts; x.html sits beside x.json (property)", () => {
    fc.assert(
      fc.property(fc.string({ maxLength: 40 }), fc.string({ maxLength: 40 }), (env, reward) => {
        const name = standaloneFileName("audit", env, reward);
        expect(name).toMatch(/^audit-[A-Za-z0-9_.-]+-[A-Za-z0-9_.-]+\.html$/);
        expect(name).not.toContain("/");
        expect(fileSlug(env)).not.toMatch(/^\./);
        expect(jsonBeside(name)).toBe(name.slice(0, -5) + ".json");
      }),
    );
  });

  it("the reproduce command line splits back into the same words in a POSIX shell (property, /bin/sh)", () => {
    fc.assert(
      fc.property(fc.array(fc.string({ minLength: 1, maxLength: 12 }).filter((s) => !s.includes("\u0000")), { minLength: 1, maxLength: 4 }), (args) => {
        const words = execFileSync("/bin/sh", ["-c", `printf '%s\\0' ${commandLine(args)}`]).toString("utf8").split("\u0000").slice(0, -1);
        expect(words).toEqual(args);
      }),
      { numRuns: 40 },
    );
  });
});

describe("standalone pages escape what came from files", () => {
  it("markup in names, messages, evidence and settings is shown as text, never as markup", async () => {
    const bad = `<script>alert(1)</script><img src=x onerror=alert(2)>"'&`;
    const audit = await renderAuditReport({
      audit: { env: bad, reward: bad, findings: [{ check: bad, severity: "critical", message: bad, evidence: { [bad]: bad } }], regret: 1, regretNorm: 0.5, loops: [] },
      settings: { [bad]: bad },
      model: null,
    });
    const pressure = await renderPressureReport({ pressure: { env: bad, reward: bad, points: [{ strength: 0, kl: 0, designer: 0, intent: 0 }, { strength: 1, kl: 1, designer: 1, intent: -1 }], peak: { strength: 0, intent: 0 }, onset: 0 }, settings: { [bad]: bad } });
    for (const html of [audit, pressure]) {
      expect(html).not.toContain("<script>alert");
      expect(html).not.toContain("<img src=x");
      expect(html.match(/<script/g)).toHaveLength(1); // the JSON data block only
      expectSelfContained(html);
      expect(text(html)).toContain(bad);
      expect(html).toContain(CAUTION);
    }
  });
});

describe.skipIf(!HAVE_CHROMIUM)("standalone audit report in headless Chromium", () => {
  it("opens quietly and offline, with the evidence drawn on the map and every finding", async () => {
    const r = await cli(["audit", "--env", "fresh-coat-tug", "--reward", "fast", "--report", "browser/audit.html", "--json"]);
    const doc = JSON.parse(r.stdout);
    const o = await openReport(shared.browser!, doc.report);
    expect(o.consoleErrors).toEqual([]);
    expect(o.pageErrors).toEqual([]);
    expect(o.dialogs).toEqual([]);
    expect(o.external).toEqual([]);
    const { page } = o;
    // The map of fresh-coat-tug: one cell per rect, as many as the map has cells (envs/fresh-coat-tug/map.txt).
    const map = readFileSync(new URL("../../envs/fresh-coat-tug/map.txt", import.meta.url), "utf8").split("\n").filter((l) => l.length > 0);
    expect(await page.locator('[data-drawing="audit-evidence"] svg').count()).toBe(1);
    expect(await page.locator('[data-drawing="audit-evidence"] svg rect').count()).toBe(map.length * Math.max(...map.map((l) => l.length)));
    const box = await page.locator('[data-drawing="audit-evidence"] svg').boundingBox();
    expect(box!.width).toBeGreaterThan(100);
    expect(await page.locator("[data-finding]").count()).toBe(doc.findings.length);
    const checks = await page.locator("[data-finding]").evaluateAll((els) => els.map((e) => e.getAttribute("data-finding")));
    expect([...checks].sort()).toEqual(doc.findings.map((f: { check: string }) => f.check).sort());
    const body = await page.locator("body").innerText();
    expect(body).toContain(CAUTION);
    expect(body).toContain("fresh-coat-tug");
  });
});
