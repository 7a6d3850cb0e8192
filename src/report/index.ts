/**
 * src/report: the HTML report (self-contained, charts rendered with Vega-Lite to SVG at report time)
 * and terminal pictures (terminal.ts). Reports read results; they never recompute them.
 */
export { writeReport, writeReportFile, renderReportFor, REPORT_FILE, type WriteReportOptions } from "./write.js";
export { renderAuditReport, renderPressureReport, standaloneFileName, jsonBeside, type AuditReportInput, type PressureReportInput } from "./standalone.js";
export { renderRunReport, curvesBlock, numberedAlerts } from "./run-report.js";
export { renderComparisonReport, pairCells, rankingOrder, verdictCounts, majority } from "./comparison-report.js";
export { renderAuditSection, auditPaths, gridSvg, trackSvg, drawingBlock, type DrawnPath } from "./audit.js";
export { renderPressureSection } from "./pressure.js";
export { renderSvg, chartFigure } from "./charts.js";
export { esc, jsonForScript } from "./escape.js";
export { OKABE_ITO, ROLE } from "./palette.js";
export {
  loadRunReport,
  loadComparisonReport,
  dirKind,
  findRunDirs,
  interval,
  type RunReportData,
  type ComparisonReportData,
  type ComparisonDoc,
  type AuditDoc,
  type PressureDoc,
} from "./data.js";
