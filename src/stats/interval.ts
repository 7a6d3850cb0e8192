/** A point estimate with an interval. Every interval-valued statistic in gapwatch returns this shape. */
export interface Interval {
  readonly point: number;
  readonly lower: number;
  readonly upper: number;
}
