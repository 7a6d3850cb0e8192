/** Reward files (`gapwatch-reward/1`, described in ./schema.ts). */
import type { RewardVariant } from "../types.js";
import { emptyDict } from "../../util/own.js";
import { parseJsonText } from "./json-errors.js";
import { checkFormatTag, rewardSchema, validate, type RewardDocument } from "./schema.js";

/** Parse and validate the text of a gapwatch-reward/1 reward file; `where` names it in messages. */
export function parseRewardFile(text: string, where: string): RewardVariant {
  const data = parseJsonText(text, where, "reward");
  checkFormatTag("reward", data, where);
  const doc = validate("reward", rewardSchema, data, where) as RewardDocument;
  const variant: RewardVariant = { name: doc.name, env: doc.env, source: where, weights: Object.assign(emptyDict<number>(), doc.weights) };
  if (doc.shaping) variant.shaping = { potential: Array.isArray(doc.shaping.potential) ? [...doc.shaping.potential] : doc.shaping.potential, scale: doc.shaping.scale };
  return variant;
}
