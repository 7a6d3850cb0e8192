/**
 * Acceptance: a run, a comparison, an audit and a pressure report, each written by the CLI, opened in
 * Debian's headless Chromium (/usr/bin/chromium via playwright-core; skipped when absent), screenshot
 * saved under runs/test-artifacts/, and the text a reader sees (Chromium's layout, `innerText`)
 * checked for:
 *  - no raw JSON and no camelCase evidence key in the audit findings (the keys come from the audit's
 *    own JSON document, written beside the page or into the run directory);
 *  - no percentage above 100 (or below 0) anywhere on the page;
 *  - a comparison band consistent with the variants' verdicts: never "decoupled" when the variant
 *    ranked first stays aligned, and the band names every variant that decouples.
 * The scenarios are chosen so the numbers leave 0..1: seed-vault-courier/per-scan ends with intent a
 * hair below random, and fresh-coat-tug/fast serves its north store worse than random (its regret-by-
 * group evidence has a normalized regret above 1).
 */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import type { Page } from "playwright-core";
import { describe, expect, it } from "vitest";
import { memoryIO } from "../../src/cli/io.js";
import { runCli } from "../../src/cli/program.js";
import { browserForAll } from "../helpers/browser.js";
import { tempDirRemovedAfterAll } from "../helpers/temp-dirs.js";
import { artifactsDir, HAVE_CHROMIUM, openReport, SKIP_REASON } from "./browser-helpers.js";

if (!HAVE_CHROMIUM) console.warn(SKIP_REASON);

const tmp = tempDirRemovedAfterAll("report-readable");
const shared = browserForAll();

async function cli(argv: string[]) {
  const io = memoryIO();
  io.cwd = tmp;
  const code = await runCli(argv, io);
  expect(code, `${argv.join(" ")}: ${io.stderr}`).toBe(0);
  return { stdout: io.stdout, stderr: io.stderr };
}

/** Every key of a JSON value, recursively. */
function keysOf(v: unknown, out = new Set<string>()): Set<string> {
  if (Array.isArray(v)) for (const x of v) keysOf(x, out);
  else if (v && typeof v === "object")
    for (const [k, x] of Object.entries(v)) {
      out.add(k);
      keysOf(x, out);
    }
  return out;
}

/** Open a report, save its screenshot, and check the visible text against the rules above. */
async function openAndCheck(file: string, shot: string, auditDoc: unknown | null): Promise<{ page: Page; text: string }> {
  const o = await openReport(shared.browser!, file);
  expect(o.pageErrors).toEqual([]);
  expect(o.external).toEqual([]);
  const { page } = o;
  await page.screenshot({ path: join(artifactsDir(), shot), fullPage: true });
  const text = await page.locator("body").innerText();
  // No percentage outside 0..100 in what a reader sees.
  for (const m of text.matchAll(/(-?\d+(?:\.\d+)?)\s?%/g)) {
    const x = Number(m[1]);
    expect(x, `"${m[0]}" in ${shot}`).toBeGreaterThanOrEqual(0);
    expect(x, `"${m[0]}" in ${shot}`).toBeLessThanOrEqual(100);
  }
  if (auditDoc) {
    const findings = await page.locator("[data-finding]").allInnerTexts();
    expect(findings.length).toBeGreaterThan(0);
    // Open the informational findings too, so their text is visible to innerText.
    await page.locator("details").evaluateAll((els) => els.forEach((e) => e.setAttribute("open", "")));
    const all = (await page.locator("[data-finding]").allInnerTexts()).join("\n");
    const legend = (await page.locator("[data-drawing] .legend").allInnerTexts()).join("\n");
    const camel = [...keysOf((auditDoc as { findings: { evidence: unknown }[] }).findings.map((f) => f.evidence))].filter((k) => /[a-z][A-Z]/.test(k));
    expect(camel.length).toBeGreaterThan(3); // the documents do use camelCase keys: the check can fail
    for (const k of camel) {
      expect(all, `evidence key ${k} shown raw in ${shot}`).not.toMatch(new RegExp(`\\b${k}\\b`));
      expect(legend, `evidence key ${k} in the drawing legend of ${shot}`).not.toMatch(new RegExp(`\\b${k}\\b`));
    }
    // No JSON: no quoted keys, no bracketed lists of numbers or records.
    expect(all).not.toMatch(/"[A-Za-z]+"\s*:/);
    expect(all).not.toMatch(/\[\s*-?\d+(\.\d+)?\s*,/);
    expect(all).not.toMatch(/[[{]\s*"/);
  }
  return { page, text };
}

describe.skipIf(!HAVE_CHROMIUM)("reports a reader understands (headless Chromium)", () => {
  it("run report with its audit and pressure sections", async () => {
    const t = await cli(["train", "--env", "seed-vault-courier", "--reward", "per-scan", "--steps", "20000", "--seed", "1", "--runs-dir", "runs", "--json"]);
    const runDir = JSON.parse(t.stdout).runDir as string;
    await cli(["audit", "--env", "seed-vault-courier", "--reward", "per-scan", "--run-dir", runDir]);
    await cli(["pressure", "--env", "seed-vault-courier", "--reward", "per-scan", "--run-dir", runDir]);
    const r = await cli(["report", runDir, "--json"]);
    const file = JSON.parse(r.stdout).report as string;
    const audit = JSON.parse(readFileSync(join(runDir, "audit.json"), "utf8"));
    const summary = JSON.parse(readFileSync(join(runDir, "summary.json"), "utf8"));
    const { text } = await openAndCheck(file, "readable-run.png", audit);
    // per-scan ends below random on intent: said in words, not as a negative percentage.
    if (summary.final.intentNorm < 0) expect(text).toMatch(/worse than random/);
    expect(text).toMatch(/Optimization pressure/);
  });

  it("comparison report: the band follows the variants' verdicts", async () => {
    const c = await cli(["compare", "--env", "seed-vault-courier", "--rewards", "default,per-scan", "--seeds", "2", "--steps", "10000", "--workers", "1", "--bootstrap-reps", "200", "--runs-dir", "cmp", "--report", "--json"]);
    const doc = JSON.parse(c.stdout);
    const { page } = await openAndCheck(doc.report, "readable-comparison.png", null);
    const rows = await page.locator("tr[data-variant]").evaluateAll((els) =>
      els.map((e) => ({ name: e.getAttribute("data-variant")!, verdict: e.querySelector(".pill")?.textContent ?? "" })),
    );
    expect(rows.length).toBe(2);
    const band = page.locator("[data-verdict]");
    const word = await band.getAttribute("data-verdict");
    const bandText = await band.innerText();
    const decoupled = rows.filter((r) => r.verdict === "decoupled").map((r) => r.name);
    if (rows[0].verdict === "aligned") expect(word).not.toBe("decoupled");
    if (decoupled.length && rows[0].verdict === "aligned") expect(word).toBe("mixed");
    if (!decoupled.length) expect(word).not.toBe("mixed");
    for (const name of decoupled) expect(bandText).toContain(name);
    // default stays aligned and per-scan decouples (envs/seed-vault-courier/scenario.json labels).
    expect(rows.find((r) => r.name === "per-scan")!.verdict).toBe("decoupled");
    expect(rows[0].name).toBe("default");
  });

  it("audit report: evidence in words, a group served worse than random said so", async () => {
    const a = await cli(["audit", "--env", "fresh-coat-tug", "--reward", "fast", "--runs-dir", "aud", "--report", "--json"]);
    const doc = JSON.parse(a.stdout);
    const audit = JSON.parse(readFileSync(doc.documents[0], "utf8"));
    const group = audit.findings.find((f: { check: string }) => f.check === "regret-by-group");
    expect(Math.max(...group.evidence.groups.map((g: { regretNorm: number }) => g.regretNorm))).toBeGreaterThan(1);
    const { page, text } = await openAndCheck(doc.report, "readable-audit.png", audit);
    expect(text).toMatch(/worse than random/);
    // The risky and the safe route are drawn in different styles (quench-hall-run has both; here only
    // routes of the regret check): every drawn path names its kind.
    expect(await page.locator("[data-path-kind]").count()).toBeGreaterThan(0);
    // The cells the designer-optimal route gives up are crossed on the map, as in the terminal picture
    // (tests/cli/audit.test.ts): one cross per cell of the regret evidence, and every curing-resin cell
    // (% in envs/fresh-coat-tug/map.txt) under a cross.
    const regret = audit.findings.find((f: { check: string }) => f.check === "regret");
    const given: number[] = regret.evidence.givenUp.stateIds;
    expect(given.length).toBeGreaterThanOrEqual(4);
    const drawing = page.locator('[data-drawing="audit-evidence"]');
    expect(await drawing.locator('[data-path-kind="given"]').count()).toBe(1);
    const centres = await drawing.locator("svg > path").evaluateAll((els) =>
      els.map((e) => {
        const [x, y] = (e.getAttribute("d") ?? "").slice(1).split("L")[0].split(",").map(Number);
        return `${x + 7},${y + 7}`;
      }),
    );
    expect(new Set(centres).size).toBe(new Set(given).size);
    const resin = await drawing.locator("svg text").evaluateAll((els) =>
      els.filter((e) => e.textContent === "%").map((e) => `${Number(e.getAttribute("x"))},${Number(e.getAttribute("y")) - 4}`),
    );
    expect(resin.length).toBe(4);
    for (const c of resin) expect(centres).toContain(c);
  });

  it("audit report with a risky and a safe route: different strokes", async () => {
    const a = await cli(["audit", "--env", "quench-hall-run", "--reward", "light-loss", "--runs-dir", "aud", "--report", "--json"]);
    const doc = JSON.parse(a.stdout);
    const audit = JSON.parse(readFileSync(doc.documents[0], "utf8"));
    const { page } = await openAndCheck(doc.report, "readable-audit-risk.png", audit);
    const styles = await page.locator("[data-drawing] svg polyline").evaluateAll((els) => els.map((e) => `${e.getAttribute("stroke")} ${e.getAttribute("stroke-dasharray") ?? "solid"}`));
    expect(new Set(styles).size).toBeGreaterThan(1);
    const kinds = await page.locator("[data-path-kind]").evaluateAll((els) => els.map((e) => e.getAttribute("data-path-kind")));
    expect(kinds).toContain("route");
    expect(kinds).toContain("safe");
  });

  it("pressure report: axis labelled where the curve changes, onset not before the peak", async () => {
    const p = await cli(["pressure", "--env", "quench-hall-run", "--reward", "light-loss", "--runs-dir", "pr", "--report", "--json"]);
    const doc = JSON.parse(p.stdout);
    expect(doc.onset).toBeGreaterThanOrEqual(doc.peak.strength);
    const { page, text } = await openAndCheck(doc.report, "readable-pressure.png", null);
    // The caption places the curve on the intent scale, from the document's own numbers.
    const n = (v: number) => (v - doc.scale.intent.random) / (doc.scale.intent.optimum - doc.scale.intent.random);
    const ints = doc.points.map((q: { intent: number }) => n(q.intent));
    expect(text).toContain(`reaches ${Math.max(...ints).toFixed(2)} at its peak and ends at ${ints[ints.length - 1].toFixed(2)}`);
    // Axis labels Chromium lays out on the chart: more than the two ends, and the peak among them.
    const labels = await page.locator('[data-chart="pressure"] svg .role-axis-label text').allTextContents();
    expect(labels.length).toBeGreaterThan(3);
    expect(labels).toContain(Number(doc.peak.strength.toPrecision(3)).toString());
  });
});
