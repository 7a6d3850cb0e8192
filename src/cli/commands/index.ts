/** Every subcommand, in help order. Add a command: its handler in src/app/<name>.ts, its flags in src/cli/commands/<name>.ts, listed here. */
import type { CommandModule } from "../context.js";
import { registerEnvs } from "./envs.js";
import { registerExport } from "./export.js";
import { registerSolve } from "./solve.js";
import { registerAudit } from "./audit.js";
import { registerPressure } from "./pressure.js";
import { registerCheck } from "./check.js";
import { registerTrain } from "./train.js";
import { registerDemo } from "./demo.js";
import { registerCompare } from "./compare.js";
import { registerWorker } from "./worker.js";
import { registerRuns } from "./runs.js";
import { registerReport } from "./report.js";
import { registerIngest } from "./ingest.js";
import { registerRetune } from "./retune.js";

export const commands: CommandModule[] = [
  registerDemo,
  registerEnvs,
  registerSolve,
  registerAudit,
  registerPressure,
  registerTrain,
  registerIngest,
  registerCompare,
  registerWorker,
  registerRuns,
  registerReport,
  registerCheck,
  registerExport,
  registerRetune,
];
