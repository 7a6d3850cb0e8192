/**
 * Readers of external training logs for `gapwatch ingest`: event files (TFRecord + Event protobuf),
 * episode-monitor CSVs, CSV/TSV and JSON-lines tables, our own JSON-lines schema. Everything but
 * read-bytes.ts, event-folder.ts and source.ts is pure.
 *
 * Typical use (one input path):
 *   const src = new IngestSource(path, { format?, step? });
 *   const snap = follow ? src.poll() : src.finish();          // every series so far, per run key
 *   const { designer, intent } = selectSeries(snap.runs.get(run)!, { designer: d, intent: i }, path);
 *   const checkpoints = snap.perEpisode
 *     ? poolEpisodes(designer, intent, window ?? defaultWindow(designer.steps)!, path)
 *     : alignSeries(designer, intent, path);
 * (our JSON-lines schema: `ownCheckpoints(table, path, { window })` decides between the two.)
 */
export { crc32c, maskCrc, maskedCrc32c } from "./crc32c.js";
export { frameRecord, isFramingError, looksLikeTfRecord, readRecords, type FramingError, type FramingResult, type FramingStatus } from "./tfrecord.js";
export { readVarint, wireFields, WireError, WireReader, type WireField } from "./protobuf.js";
export { decodeEvent, decodeTensor, eventScalars, scalarOf, DT_DOUBLE, DT_FLOAT, DT_HALF, type ScalarPoint, type SummaryValue, type TensorValue, type TfEvent } from "./tf-event.js";
export { decodeEventBytes, pointsByTag, type EventBytesResult } from "./event-file.js";
export { EventFolderReader, isEventFileName, listEventFiles, type EventFileRef, type EventRun, type PollResult } from "./event-folder.js";
export { detectDelimiter, parseDelimited, parseNumberCell, type CsvChunk, type CsvRecord, type Delimiter } from "./csv.js";
export { episodeCheckpoints, episodeColumn, looksLikeMonitorCsv, MonitorCsvReader, readMonitorCsv, type Episode, type MonitorHeader } from "./monitor-csv.js";
export { rollingMean, windowCheckpoints, type StepValue, type WindowCheckpoint } from "./windows.js";
export { DelimitedReader, JsonLinesReader, readDelimitedSeries, readJsonLinesSeries, STEP_COLUMNS, type TableOptions, type TableSeries } from "./table.js";
export { detectFormat, parseFormat, INGEST_FORMATS, type IngestFormat } from "./detect.js";
export { listNames, pickSeries, selectSeries, seriesFromPoints, suggestName, MAX_SUGGEST_NAME, type Series } from "./series.js";
export { alignSeries, defaultWindow, ownCheckpoints, ownLineKind, poolEpisodes, rollingCheckpoints, type IngestCheckpoint, type OwnLineKind } from "./checkpoints.js";
export { episodeSeries, IngestSource, type SourceOptions, type SourceSnapshot } from "./source.js";
