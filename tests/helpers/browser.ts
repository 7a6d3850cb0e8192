/** The report tests' headless Chromium, one per test file (see ../report/browser-helpers.ts). */
import type { Browser } from "playwright-core";
import { afterAll, beforeAll } from "vitest";
import { HAVE_CHROMIUM, launch } from "../report/browser-helpers.js";

/** Launched before the file's tests when Chromium is installed (else `browser` stays undefined), closed after. Call at module level. */
export function browserForAll(): { readonly browser: Browser | undefined } {
  const box: { browser: Browser | undefined } = { browser: undefined };
  beforeAll(async () => {
    if (HAVE_CHROMIUM) box.browser = await launch();
  });
  afterAll(async () => {
    await box.browser?.close();
  });
  return box;
}
