/**
 * The HTML report in a real browser (Debian's headless Chromium via playwright-core): a train run
 * of a gaming variant and a comparison of three variants, each opened from file://, with no console
 * or page errors, no request leaving the file, the expected charts and one marker per alert, the
 * verdict and its reason in the text, and a screenshot saved under runs/test-artifacts/.
 *
 * The reference is outside the project: Chromium's HTML/SVG engine lays the page out, and the counts
 * come from the run's own files (alerts.jsonl, comparison.json), never from the report code.
 */
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import type { Browser } from "playwright-core";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { runAudit } from "../../src/audit/run.js";
import { runCompare } from "../../src/batch/compare.js";
import { loadEnv, resolveReward } from "../../src/env/index.js";
import { pressureCurve } from "../../src/pressure/curve.js";
import { writeReport } from "../../src/report/write.js";
import { readRun } from "../../src/store/run-store.js";
import { runTraining } from "../../src/train/run.js";
import { artifactsDir, HAVE_CHROMIUM, launch, openReport, SKIP_REASON } from "./browser-helpers.js";

if (!HAVE_CHROMIUM) console.warn(SKIP_REASON);

const tmp = mkdtempSync(join(tmpdir(), "gapwatch-report-"));
let browser: Browser;

beforeAll(async () => {
  if (HAVE_CHROMIUM) browser = await launch();
});
afterAll(async () => {
  await browser?.close();
  rmSync(tmp, { recursive: true, force: true });
});

describe.skipIf(!HAVE_CHROMIUM)("report in headless Chromium", () => {
  it("train run of a gaming variant: verdict, curves, one marker per alert, audit and pressure drawn", async () => {
    // fresh-coat-tug/fast is a documented gaming variant (envs/fresh-coat-tug/scenario.json).
    const run = await runTraining({ env: "fresh-coat-tug", reward: "fast", steps: 20_000, checkpoints: 20, seed: 1 }, { runsDir: join(tmp, "runs") });
    const model = (await loadEnv("fresh-coat-tug")).model!;
    const variant = resolveReward(model, "fast");
    writeFileSync(join(run.runDir, "audit.json"), JSON.stringify(runAudit(model, variant)));
    writeFileSync(join(run.runDir, "pressure.json"), JSON.stringify(pressureCurve(model, variant)));
    const file = await writeReport(run.runDir);
    expect(file).toBe(join(run.runDir, "report.html"));

    // What the run directory says, read back independently of the report.
    const stored = readRun(run.runDir);
    expect(stored.alerts.length).toBeGreaterThan(0);

    const o = await openReport(browser, file);
    expect(o.consoleErrors).toEqual([]);
    expect(o.pageErrors).toEqual([]);
    expect(o.external).toEqual([]);
    const { page } = o;
    // curves (normalized), curves-raw, pressure.
    expect(await page.locator("[data-chart]").count()).toBe(3);
    expect(await page.locator('[data-chart="curves"] svg').count()).toBe(1);
    for (const box of await page.locator("[data-chart] svg").evaluateAll((els) => els.map((e) => e.getBoundingClientRect().width))) expect(box).toBeGreaterThan(200);
    expect(await page.locator("[data-alert]").count()).toBe(stored.alerts.length);
    const steps = await page.locator("[data-alert]").evaluateAll((els) => els.map((e) => Number(e.getAttribute("data-alert-step"))));
    expect(steps).toEqual(stored.alerts.map((a) => a.step));
    const verdict = page.locator("[data-verdict]");
    expect(await verdict.getAttribute("data-verdict")).toBe(stored.verdict);
    const verdictText = await verdict.innerText();
    expect(verdictText.toLowerCase()).toContain(stored.verdict);
    expect(verdictText).toContain(stored.reason);
    for (const a of stored.alerts) expect(await page.locator("ol.alerts").innerText()).toContain(a.message);
    // Drawings of the learned route and of the audit's evidence on the fresh-coat-tug map.
    expect(await page.locator('[data-drawing="learned-route"] svg rect').count()).toBe(model.layout!.kind === "grid" ? model.layout!.rows * model.layout!.cols : 0);
    expect(await page.locator('[data-drawing="audit-evidence"]').count()).toBe(1);
    expect(await page.locator("[data-finding]").count()).toBeGreaterThan(0);
    // Reproduce section and caution.
    const body = await page.locator("body").innerText();
    expect(body).toContain(stored.runId);
    expect(body).toContain("Evidence, not certification");
    await page.screenshot({ path: join(artifactsDir(), "report-run.png"), fullPage: true });
  });

  it("comparison of three variants: intervals, alert rates, pairwise matrix, small multiples, every run's alerts", async () => {
    const cmp = await runCompare({
      env: "fresh-coat-tug",
      rewards: ["default", "fast", "shaped"],
      learners: ["q-learning"],
      seeds: [1, 2],
      steps: 20_000,
      bootstrapSeed: 3,
      reps: 300,
      runsDir: join(tmp, "cmp"),
      workers: 1,
    });
    const file = await writeReport(cmp.dir, { out: join(tmp, "comparison.html") });
    const runs = cmp.doc.runDirs.map((r) => readRun(r.runDir));
    const totalAlerts = runs.reduce((s, r) => s + r.alerts.length, 0);
    expect(totalAlerts).toBeGreaterThan(0);

    const o = await openReport(browser, file);
    expect(o.consoleErrors).toEqual([]);
    expect(o.pageErrors).toEqual([]);
    expect(o.external).toEqual([]);
    const { page } = o;
    const charts = await page.locator("[data-chart]").evaluateAll((els) => els.map((e) => e.getAttribute("data-chart")));
    expect(charts).toEqual(["intervals", "alert-rates", "pairs", "small-multiples"]);
    expect(await page.locator("[data-alert]").count()).toBe(totalAlerts);
    expect(await page.locator("tr[data-variant]").count()).toBe(3);
    // fast games the specification in every run (scenario.json lists it under "gaming").
    const fast = cmp.doc.variants.find((v) => v.reward === "fast")!;
    expect(fast.verdicts.decoupled).toBe(2);
    expect(await page.locator('tr[data-variant="fast"]').innerText()).toContain("decoupled");
    // The best variants stay aligned: the band says "mixed" and names the variant that decouples.
    expect(await page.locator("[data-verdict]").getAttribute("data-verdict")).toBe("mixed");
    expect(await page.locator("[data-verdict]").innerText()).toMatch(/decouples? from intent in most runs \(fast\)/);
    // Small multiples: one panel header per variant, rendered by Vega into the SVG.
    const svgText = await page.locator('[data-chart="small-multiples"] svg').innerHTML();
    for (const v of ["default", "fast", "shaped"]) expect(svgText).toContain(`>${v}<`);
    await page.screenshot({ path: join(artifactsDir(), "report-comparison.png"), fullPage: true });
  });
});
