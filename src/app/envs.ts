/** `gapwatch envs`: the built-in scenarios. */
import { builtinScenarioNames, loadScenario } from "../env/scenarios.js";

export interface EnvListing {
  name: string;
  family: string;
  states: number;
  actions: string[];
  features: string[];
  rewards: string[];
  description: string;
}

/** List the built-in scenarios; the result is what `envs --json` prints. */
export function listEnvs(): { envs: EnvListing[] } {
  return {
    envs: builtinScenarioNames().map((name) => {
      const { model, scenario } = loadScenario(name);
      return {
        name,
        family: scenario.family,
        states: model.nStates,
        actions: [...model.actions],
        features: [...model.features],
        rewards: Object.keys(model.variants ?? {}),
        description: scenario.description,
      };
    }),
  };
}
