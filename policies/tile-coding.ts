/**
 * Tile coding (Sutton & Barto 2018, section 9.5.4): `tilings` overlapping grids over a bounded numeric
 * observation. Each tiling has `tiles[j]` tiles of width w_j = (high_j - low_j) / tiles[j] along
 * dimension j, plus one extra tile so the shifted grid still covers the box. Tiling i is displaced by
 * ((i * d_j) mod tilings) * w_j / tilings along dimension j with the asymmetric displacement vector
 * d = (1, 3, 5, ...), the odd numbers the book recommends (from memory: the book's rule is "(1, 3, 5,
 * 7, ...) in units of w/n"; the mod keeps every offset within one tile). Every point activates exactly
 * one tile per tiling. Observations are clipped to the box.
 */
import { InputError } from "../src/errors.js";

export interface TileCodingConfig {
  /** Number of tilings n (the book suggests a power of two, at least 4 × dimensions). */
  tilings: number;
  /** Tiles per dimension in each tiling (one number for every dimension, or one per dimension). */
  tiles: number | number[];
  /** Lower bound of each observation dimension (default: the minimum over the environment's states). */
  low?: number[];
  /** Upper bound of each observation dimension (default: the maximum over the environment's states). */
  high?: number[];
}

export class TileCoder {
  readonly dim: number;
  readonly tilings: number;
  readonly tiles: Int32Array;
  readonly low: Float64Array;
  readonly width: Float64Array;
  /** Offsets per tiling and dimension, as a fraction of a tile width in [0, 1). */
  readonly offset: Float64Array;
  readonly perTiling: number;
  /** Total number of binary features: tilings × Π(tiles_j + 1). */
  readonly size: number;
  private readonly stride: Int32Array;

  constructor(config: { tilings: number; tiles: number | number[]; low: number[]; high: number[] }) {
    const { tilings, low, high } = config;
    const dim = low.length;
    if (!(Number.isInteger(tilings) && tilings >= 1)) throw new InputError("config.tilings", `tilings must be a positive integer, got ${tilings}`, "learner.tiling.tilings");
    if (high.length !== dim || dim < 1) throw new InputError("config.tiling", `low and high need one entry per observation dimension (got ${dim} and ${high.length})`, "learner.tiling");
    const tiles = typeof config.tiles === "number" ? new Array(dim).fill(config.tiles) : config.tiles;
    if (tiles.length !== dim || tiles.some((t) => !(Number.isInteger(t) && t >= 1))) {
      throw new InputError("config.tiling", `tiles must be a positive integer or one per dimension (${dim})`, "learner.tiling.tiles");
    }
    this.dim = dim;
    this.tilings = tilings;
    this.tiles = Int32Array.from(tiles);
    this.low = Float64Array.from(low);
    this.width = new Float64Array(dim);
    this.stride = new Int32Array(dim);
    let per = 1;
    for (let j = 0; j < dim; j++) {
      if (!(Number.isFinite(low[j]) && Number.isFinite(high[j]) && high[j] > low[j])) {
        throw new InputError("config.tiling", `dimension ${j}: need finite low < high, got [${low[j]}, ${high[j]}]`, "learner.tiling");
      }
      this.width[j] = (high[j] - low[j]) / tiles[j];
      this.stride[j] = per;
      per *= tiles[j] + 1;
    }
    this.perTiling = per;
    this.size = per * tilings;
    this.offset = new Float64Array(tilings * dim);
    for (let i = 0; i < tilings; i++) for (let j = 0; j < dim; j++) this.offset[i * dim + j] = ((i * (2 * j + 1)) % tilings) / tilings;
  }

  /** Write the `tilings` active feature indices of observation x into out[0 .. tilings-1]. */
  active(x: ArrayLike<number>, out: Int32Array): void {
    const { dim, tilings } = this;
    for (let i = 0; i < tilings; i++) {
      let idx = i * this.perTiling;
      for (let j = 0; j < dim; j++) {
        const hi = this.tiles[j] * this.width[j];
        let u = x[j] - this.low[j];
        if (u < 0) u = 0;
        else if (u > hi) u = hi;
        const c = Math.floor(u / this.width[j] + this.offset[i * dim + j]);
        idx += c * this.stride[j];
      }
      out[i] = idx;
    }
  }
}
