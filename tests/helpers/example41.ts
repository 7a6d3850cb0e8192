/**
 * Sutton & Barto 2018, Example 4.1 (REFERENCE_VALUES.md 1.1): the 4x4 gridworld, terminal corners
 * (0,0) and (3,3) (two terminal states here), actions up/down/left/right, a move off the grid stays,
 * reward -1 on every transition, gamma 1; one feature "r" carries the reward.
 */
import { ModelBuilder } from "../../src/model/builder.js";
import type { FiniteModel } from "../../src/model/types.js";

export function example41(): { model: FiniteModel; reward: Float64Array } {
  const b = new ModelBuilder({ name: "ex41", nStates: 16, actions: ["up", "down", "left", "right"], features: ["r"], gamma: 1, horizon: 1000 });
  b.setTerminal(0).setTerminal(15).setStart(5, 1);
  const d = [
    [-1, 0],
    [1, 0],
    [0, -1],
    [0, 1],
  ];
  for (let s = 1; s < 15; s++) {
    const r = Math.floor(s / 4);
    const c = s % 4;
    d.forEach(([dr, dc], a) => b.addOutcome(s, a, Math.min(3, Math.max(0, r + dr)) * 4 + Math.min(3, Math.max(0, c + dc)), 1, [-1]));
  }
  const model = b.build();
  return { model, reward: Float64Array.from(model.featureValues) };
}
