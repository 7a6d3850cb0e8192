/** Shared result shape of the batch forms of the change detectors. Indices are 0-based. */
export interface AlarmSummary {
  /** 0-based indices of every observation at which the detector signalled. */
  readonly alarms: number[];
  /** First alarm index, or -1 if the detector never signalled. */
  readonly firstAlarm: number;
}
