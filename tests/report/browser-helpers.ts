/**
 * Headless Chromium for the report tests: Debian's /usr/bin/chromium (installed by .ci/run) driven
 * by playwright-core. Every page load records console errors, page errors, dialogs and every
 * request that is not to a file: or data: URL, so tests can assert a report is quiet and offline.
 */
import { existsSync, mkdirSync } from "node:fs";
import { fileURLToPath } from "node:url";
import { chromium, type Browser, type Page } from "playwright-core";

export const CHROMIUM = "/usr/bin/chromium";
export const HAVE_CHROMIUM = existsSync(CHROMIUM);
export const SKIP_REASON = `report browser tests skipped: ${CHROMIUM} is absent (apt-get install chromium; .ci/run installs it)`;

/** runs/test-artifacts/ (git-ignored through runs/*). */
export const ARTIFACTS = fileURLToPath(new URL("../../runs/test-artifacts/", import.meta.url));

export function artifactsDir(): string {
  mkdirSync(ARTIFACTS, { recursive: true });
  return ARTIFACTS;
}

export async function launch(): Promise<Browser> {
  return chromium.launch({
    executablePath: CHROMIUM,
    args: ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync"],
  });
}

export interface Opened {
  page: Page;
  consoleErrors: string[];
  pageErrors: string[];
  dialogs: string[];
  external: string[];
}

/** Open a report file and record everything that should not happen. */
export async function openReport(browser: Browser, file: string, viewport = { width: 1100, height: 900 }): Promise<Opened> {
  const page = await browser.newPage({ viewport });
  const o: Opened = { page, consoleErrors: [], pageErrors: [], dialogs: [], external: [] };
  page.on("console", (m) => {
    if (m.type() === "error") o.consoleErrors.push(m.text());
  });
  page.on("pageerror", (e) => o.pageErrors.push(String(e)));
  page.on("dialog", (d) => {
    o.dialogs.push(`${d.type()}: ${d.message()}`);
    void d.dismiss();
  });
  page.on("request", (r) => {
    if (!/^(file|data):/.test(r.url())) o.external.push(r.url());
  });
  await page.goto("file://" + file, { waitUntil: "load" });
  return o;
}
