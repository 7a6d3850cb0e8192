/**
 * No user-provided string can inject markup or script into a report. References outside the project:
 * the HTML5 named character references (WHATWG HTML, "named character references": &amp; &lt; &gt;
 * &quot; &#39;), JSON.parse (ECMA-404 \u escapes), and Chromium's own HTML parser, which must read
 * every escaped string back as exactly the text it was.
 */
import fc from "fast-check";
import { readFileSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { renderComparisonReport } from "../../src/report/comparison-report.js";
import { esc, hideControls, jsonForScript } from "../../src/report/escape.js";

// C0/C1 controls except tab and line breaks, and the Unicode direction controls (UAX #9).
// eslint-disable-next-line no-control-regex
const HIDDEN_CHARS = /[\u0000-\u0008\u000b\u000c\u000e-\u001f\u007f-\u009f\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069]/;
import { renderSvg } from "../../src/report/charts.js";
import { writeReport } from "../../src/report/write.js";
import { readRun } from "../../src/store/run-store.js";
import { runTraining } from "../../src/train/run.js";
import { browserForAll } from "../helpers/browser.js";
import { tempDirRemovedAfterAll } from "../helpers/temp-dirs.js";
import { artifactsDir, HAVE_CHROMIUM, openReport } from "./browser-helpers.js";

const EVIL = "<img src=x onerror=alert(1)><script>alert(2)</script>";
const tmp = tempDirRemovedAfterAll("escape");
const shared = browserForAll();

describe("escape helpers", () => {
  it("replaces the five HTML-significant characters with their character references (WHATWG HTML)", () => {
    expect(esc(`a&b<c>d"e'f`)).toBe("a&amp;b&lt;c&gt;d&quot;e&#39;f");
    expect(esc(EVIL)).toBe("&lt;img src=x onerror=alert(1)&gt;&lt;script&gt;alert(2)&lt;/script&gt;");
  });

  it("control characters and Unicode direction controls (UAX #9 explicit formatting characters) become U+FFFD", () => {
    expect(esc("a\u202eb\u001b[2Jc\u2066d")).toBe("a\ufffdb\ufffd[2Jc\ufffdd");
    expect(esc("tab\tand\nline")).toBe("tab\tand\nline");
  });

  it("property: escaped text has no raw < > \" ' and decodes back to the input", () => {
    const decode = (s: string) => s.replace(/&(amp|lt|gt|quot|#39);/g, (_m, e: string) => ({ amp: "&", lt: "<", gt: ">", quot: '"', "#39": "'" })[e]!);
    fc.assert(
      fc.property(fc.string({ unit: "binary" }), (s) => {
        const e = esc(s);
        expect(/[<>"']/.test(e)).toBe(false);
        expect(decode(e)).toBe(hideControls(s));
        expect(HIDDEN_CHARS.test(e)).toBe(false);
      }),
    );
  });

  it("property: embedded JSON has no < > & or line separators and JSON.parse gives the value back (ECMA-404)", () => {
    fc.assert(
      fc.property(fc.jsonValue(), fc.string({ unit: "binary" }), (v, s) => {
        const doc = { v, s, evil: EVIL + s };
        const text = jsonForScript(doc);
        expect(/[<>&\u2028\u2029\u202a-\u202e\u2066-\u2069]/.test(text)).toBe(false);
        expect(JSON.parse(text)).toEqual(JSON.parse(JSON.stringify(doc)));
      }),
    );
  });

  it("Vega escapes names it writes into SVG text and attributes", async () => {
    const svg = await renderSvg({ data: { values: [{ name: EVIL, x: 1 }] }, mark: "bar", encoding: { y: { field: "name", type: "nominal" }, x: { field: "x", type: "quantitative" } } });
    expect(svg).not.toContain("<script");
    expect(svg).not.toContain("<img");
    expect(svg).toContain("&lt;script&gt;");
  });

  it("chart text carries no control or direction character from a name", async () => {
    const svg = await renderSvg({ data: { values: [{ name: "a\u202eb\u001b]0;t\u0007", x: 1 }] }, mark: "bar", encoding: { y: { field: "name", type: "nominal" }, x: { field: "x", type: "quantitative" } } });
    expect(HIDDEN_CHARS.test(svg)).toBe(false);
    expect(svg).toContain("a\ufffdb\ufffd]0;t\ufffd");
  });
});

describe.skipIf(!HAVE_CHROMIUM)("escaping in the browser", () => {
  it("Chromium's HTML parser reads every escaped string back as the same text (property, 200 strings)", async () => {
    const page = await shared.browser!.newPage();
    const samples = fc.sample(fc.string({ unit: "grapheme", maxLength: 40 }).map((s) => s + EVIL.slice(0, s.length % EVIL.length)), { numRuns: 200, seed: 42 });
    samples.push(EVIL, "</script><!--", "&amp;lt;", '"><svg onload=alert(3)>');
    const html = samples.map((s, i) => `<p id="t${i}" title="${esc(s)}">${esc(s)}</p>`).join("");
    await page.setContent(`<!doctype html><body>${html}</body>`);
    const back = await page.evaluate((n) => Array.from({ length: n }, (_, i) => { const el = document.getElementById(`t${i}`)!; return [el.textContent, el.getAttribute("title"), el.children.length]; }), samples.length);
    // The HTML parser normalizes CR and CRLF to LF in text and attribute values (WHATWG HTML, preprocessing the input stream).
    back.forEach(([text, title, kids], i) => {
      expect(text).toBe(hideControls(samples[i]).replace(/\r\n?/g, "\n"));
      expect(title).toBe(hideControls(samples[i]).replace(/\r\n?/g, "\n"));
      expect(kids).toBe(0);
    });
    await page.close();
  });

  it("a reward variant named with markup cannot inject script into a run report", async () => {
    // A reward file whose variant name is markup (fresh-coat-tug' features; same weights as its "fast" variant).
    const rewardFile = join(tmp, "evil.json");
    const fast = JSON.parse(readFileSync(new URL("../../envs/fresh-coat-tug/rewards/fast.json", import.meta.url), "utf8"));
    writeFileSync(rewardFile, JSON.stringify({ ...fast, name: EVIL }));
    const run = await runTraining({ env: "fresh-coat-tug", reward: rewardFile, steps: 20_000, seed: 2 }, { runsDir: join(tmp, "runs") });
    const file = await writeReport(run.runDir);
    const html = readFileSync(file, "utf8");
    expect(html).not.toContain(EVIL);
    expect(html).not.toContain("<img");
    expect(html).not.toContain("<script>");
    expect(html).toContain(esc(EVIL)); // the name is shown, as text

    const o = await openReport(shared.browser!, file);
    expect(o.dialogs).toEqual([]);
    expect(o.pageErrors).toEqual([]);
    expect(o.consoleErrors).toEqual([]);
    expect(await o.page.locator("img").count()).toBe(0);
    expect(await o.page.locator("script").count()).toBe(1); // only the inert application/json data block
    expect(await o.page.locator("script").getAttribute("type")).toBe("application/json");
    expect(await o.page.locator("h1").innerText()).toContain(EVIL);
    const data = JSON.parse((await o.page.locator("#gapwatch-data").textContent()) ?? "null");
    expect(data.rewardName).toBe(EVIL);
    expect(readRun(run.runDir).alerts.length).toBe(await o.page.locator("[data-alert]").count());
    await o.page.screenshot({ path: join(artifactsDir(), "report-escaping.png") });
  });

  it("variant, env and message strings with markup stay text in a comparison report, inside Vega's SVG too", async () => {
    const names = [EVIL, `${EVIL}-b`];
    const runs = names.map((reward, i) => ({
      runId: `r${i}`,
      runDir: tmp,
      config: { env: EVIL, reward, learner: EVIL, steps: 10, seed: i + 1, checkpoints: 2, learnerParams: { note: EVIL }, evaluation: "exact" as const, mcEpisodes: 2, monitor: {} },
      status: "complete" as const,
      verdict: "decoupled" as const,
      reason: EVIL,
      checkpoints: [0, 1].map((k) => ({ step: 5 * (k + 1), episodes: 1, designer: k, intent: 1 - k, designerNorm: k, intentNorm: 1 - k, gap: 2 * k - 1, rank: null })),
      alerts: [{ step: 10, kind: "proxy-saturated" as const, magnitude: 1, message: EVIL }],
      final: null,
      firstAlertStep: 10,
      references: { designerOptimal: 1, designerRandom: 0, intentOptimal: 1, intentRandom: 0 },
      steps: 10,
      episodes: 1,
      trainSeconds: 0,
      monitorSeconds: 0,
    }));
    const html = await renderComparisonReport({
      comparison: {
        env: EVIL,
        variants: names.map((reward) => ({ reward, runs: 1, verdicts: { decoupled: 1 }, alertRate: { p: 1, ci: [0.2, 1] }, designer: { iqm: 1, ci: [0.9, 1] }, intent: { iqm: 0, ci: [0, 0.1] } })),
        ranking: names,
        pairs: [{ a: names[0], b: names[1], probabilityOfImprovement: 0.5, ci: [0.2, 0.8] }],
        note: EVIL,
      },
      runs,
      audit: { env: EVIL, reward: EVIL, findings: [{ check: EVIL, severity: "critical", message: EVIL, evidence: { [EVIL]: EVIL } }], loops: [{ states: [EVIL], actions: [EVIL] }] },
      pressure: { points: [{ strength: 0, designer: 0, intent: 1 }, { strength: 1, designer: 1, intent: 0 }], peak: 0, onset: 1 },
    });
    expect(html).not.toContain(EVIL);
    expect(html).not.toMatch(/<img|<script>|onerror=alert\(1\)>/);
    const file = join(tmp, "evil-comparison.html");
    writeFileSync(file, html);
    const o = await openReport(shared.browser!, file);
    expect(o.dialogs).toEqual([]);
    expect(o.pageErrors).toEqual([]);
    expect(await o.page.locator("img").count()).toBe(0);
    expect(await o.page.locator("script").count()).toBe(1);
    // The names reached Vega's axis labels as text.
    expect(await o.page.locator('[data-chart="intervals"] svg').textContent()).toContain(EVIL.slice(0, 20));
    expect(await o.page.locator("[data-alert]").count()).toBe(2);
  });
});
