import { describe, expect, it } from "vitest";
import { alertsText } from "../../src/cli/commands/train.js";

describe("train's human alert summary", () => {
  it("groups re-fired alerts by kind in order of first firing, with every step and the latest message", () => {
    const t = alertsText(
      [
        { step: 100, kind: "intent-drop", message: "first drop" },
        { step: 200, kind: "proxy-saturated", message: "saturated" },
        { step: 300, kind: "intent-drop", message: "second drop" },
      ],
      false,
    );
    expect(t).toBe("alerts (3):\n  intent-drop  2x, at steps 100, 300\n    second drop\n  proxy-saturated  at step 200\n    saturated\n");
  });
  it("shortens long step lists and adds no colour when colour is off", () => {
    const many = Array.from({ length: 9 }, (_, i) => ({ step: (i + 1) * 10, kind: "rank-break", message: "m" }));
    const t = alertsText(many, false);
    expect(t).toContain("9x, at steps 10, 20, 30, 40, 50, 60, ... (3 more)");
    expect(t).not.toMatch(/\u001b\[/);
  });
});
