/**
 * Learners never see intent (ARCHITECTURE.md: only src/monitor, src/audit, src/pressure and src/solve
 * read it). Checks every policies/ source's imports and text.
 */
import { readdirSync, readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";

const dir = join(import.meta.dirname, "../../policies");
const files = readdirSync(dir).filter((f) => f.endsWith(".ts"));

describe("policies/ isolation from intent", () => {
  it("has the learner files", () => {
    expect(files).toEqual(expect.arrayContaining(["qlearning.ts", "sarsa.ts", "expected-sarsa.ts", "double-q.ts", "linear-sarsa.ts", "tile-coding.ts", "index.ts"]));
  });
  for (const f of files) {
    it(`${f} imports nothing that reaches intent and never mentions it`, () => {
      const text = readFileSync(join(dir, f), "utf8");
      const imports = [...text.matchAll(/from\s+"([^"]+)"/g)].map((m) => m[1]);
      for (const spec of imports) {
        expect(spec).not.toMatch(/src\/(monitor|solve|audit|pressure)(\/|$)/);
        // only type imports of the model layer's learner view are allowed from src/model
        if (spec.includes("src/model/")) expect(spec).toMatch(/src\/model\/learner-view\.js$/);
      }
      expect(text.toLowerCase()).not.toContain("intent");
    });
  }
});
