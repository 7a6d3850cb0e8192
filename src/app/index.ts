/**
 * One plain async handler per command: a typed config in, a result out whose `doc` is what the
 * command prints with --json. The CLI (src/cli) only parses flags, calls one of these and prints.
 */
export { listEnvs, type EnvListing } from "./envs.js";
export { runSolve, solveDocument, type SolveConfig } from "./solve.js";
export { runAuditCommand, type AuditConfig } from "./audit.js";
export { runPressure, type PressureConfig } from "./pressure.js";
export { runExport, type ExportConfig } from "./export.js";
export { runDemo, runDemoCommand, type DemoRow, type DemoCommandConfig } from "./demo.js";
export { runTrainCommand, trainDocument, type TrainCommandConfig } from "./train.js";
export { runCompareCommand, type CompareCommandConfig } from "./compare.js";
export { runCheckCommand, checkDocument, type CheckConfig } from "./check.js";
export { runReportCommand, findOpener, type ReportCommandConfig } from "./report.js";
export { listRuns, type RunsConfig } from "./runs.js";
export { checkRunDir, type DocumentOutputOptions } from "./outputs.js";
export { ingestDocument, runIngest, systemClock, type IngestClock, type IngestConfig, type IngestFollowOptions } from "./ingest.js";
export { runRetuneCommand, parseMoves, type RetuneConfig } from "./retune.js";
export { runAuditLayouts, type AuditLayoutsConfig, type AuditLayoutsDoc } from "./audit-layouts.js";
