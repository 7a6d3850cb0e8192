/**
 * Decoders for the TensorFlow event messages, only the fields a scalar reader needs. Field numbers as in
 * the public .proto sources:
 *   tensorflow/core/util/event.proto       Event: wall_time double = 1, step int64 = 2,
 *                                           file_version string = 3, summary Summary = 5
 *   tensorflow/core/framework/summary.proto Summary: repeated Value value = 1
 *                                           Value: tag string = 1, simple_value float = 2,
 *                                                  tensor TensorProto = 8, metadata SummaryMetadata = 9
 *                                           SummaryMetadata: plugin_data PluginData = 1
 *                                           PluginData: plugin_name string = 1
 *   tensorflow/core/framework/tensor.proto  TensorProto: dtype DataType = 1, tensor_shape = 2,
 *                                           tensor_content bytes = 4, float_val = 5 (packed),
 *                                           double_val = 6 (packed), half_val int32 = 13 (packed)
 *   tensorflow/core/framework/tensor_shape.proto TensorShapeProto: repeated Dim dim = 2; Dim: size int64 = 1
 *   tensorflow/core/framework/types.proto  DataType: DT_FLOAT = 1, DT_DOUBLE = 2, DT_HALF = 19
 * Scalars come from `simple_value` (PyTorch / tensorboardX writers) or from a one-element float tensor
 * (TF2 `tf.summary.scalar`, plugin "scalars"). Pure.
 */
import { type WireField, WireError, halfToNumber, readDouble, readFloat, readString, readVarint, varintToInt32, varintToInt64, wireFields } from "./protobuf.js";

export const DT_FLOAT = 1;
export const DT_DOUBLE = 2;
export const DT_HALF = 19;

/** One scalar reading of one tag. */
export interface ScalarPoint {
  readonly tag: string;
  readonly step: number;
  readonly wallTime: number;
  readonly value: number;
}

export interface TensorValue {
  readonly dtype: number;
  /** Dimension sizes; [] for a scalar. */
  readonly shape: number[];
  /** The numeric elements when the dtype is a float type we read; otherwise empty. */
  readonly values: number[];
}

export interface SummaryValue {
  readonly tag: string;
  readonly simpleValue?: number;
  readonly tensor?: TensorValue;
  readonly pluginName?: string;
}

export interface TfEvent {
  readonly wallTime: number;
  readonly step: number;
  readonly fileVersion?: string;
  /** Summary values; empty when the event carries none. */
  readonly values: SummaryValue[];
}

function sub(buf: Uint8Array, f: WireField): Uint8Array {
  if (f.wire !== 2) throw new WireError(`field ${f.field} should be length-delimited, has wire type ${f.wire}`, f.at);
  return buf.subarray(f.start, f.end);
}

function expectWire(f: WireField, wire: number): void {
  if (f.wire !== wire) throw new WireError(`field ${f.field} has wire type ${f.wire}, expected ${wire}`, f.at);
}

/** Repeated numeric field, packed (one length-delimited run) or not (one element per field). */
function pushRepeated(buf: Uint8Array, f: WireField, width: 0 | 4 | 8, out: number[], read: (b: Uint8Array, at: number) => number): void {
  if (f.wire === 2) {
    if (width === 0) {
      let at = f.start;
      while (at < f.end) {
        const v = readVarint(buf, at, f.end);
        out.push(varintToInt32(v.value));
        at = v.next;
      }
      return;
    }
    if ((f.end - f.start) % width !== 0) throw new WireError(`packed field ${f.field} is not a whole number of ${width}-byte values`, f.at);
    for (let at = f.start; at < f.end; at += width) out.push(read(buf, at));
  } else if (f.wire === 0 && width === 0) {
    out.push(varintToInt32(f.varint));
  } else if ((f.wire === 5 && width === 4) || (f.wire === 1 && width === 8)) {
    out.push(read(buf, f.at));
  } else {
    throw new WireError(`repeated field ${f.field} has wire type ${f.wire}`, f.at);
  }
}

function decodeShape(buf: Uint8Array): number[] {
  const dims: number[] = [];
  for (const f of wireFields(buf)) {
    if (f.field !== 2) continue;
    let size = 0;
    for (const g of wireFields(sub(buf, f))) if (g.field === 1 && g.wire === 0) size = varintToInt64(g.varint);
    dims.push(size);
  }
  return dims;
}

export function decodeTensor(buf: Uint8Array): TensorValue {
  let dtype = 0;
  let shape: number[] = [];
  let content: Uint8Array | undefined;
  const floats: number[] = [];
  const doubles: number[] = [];
  const halves: number[] = [];
  for (const f of wireFields(buf)) {
    if (f.field === 1) {
      expectWire(f, 0);
      if (f.wire === 0) dtype = Number(f.varint);
    } else if (f.field === 2) shape = decodeShape(sub(buf, f));
    else if (f.field === 4) content = sub(buf, f);
    else if (f.field === 5) pushRepeated(buf, f, 4, floats, readFloat);
    else if (f.field === 6) pushRepeated(buf, f, 8, doubles, readDouble);
    else if (f.field === 13) pushRepeated(buf, f, 0, halves, () => 0);
  }
  let values: number[] = [];
  if (content !== undefined && content.length > 0) {
    const c = content;
    const width = dtype === DT_FLOAT ? 4 : dtype === DT_DOUBLE ? 8 : dtype === DT_HALF ? 2 : 0;
    if (width > 0) {
      if (c.length % width !== 0) throw new WireError(`tensor_content has ${c.length} bytes, not a multiple of ${width}`, 0);
      const dv = new DataView(c.buffer, c.byteOffset, c.byteLength);
      for (let at = 0; at < c.length; at += width) {
        values.push(width === 4 ? dv.getFloat32(at, true) : width === 8 ? dv.getFloat64(at, true) : halfToNumber(dv.getUint16(at, true)));
      }
    }
  } else if (dtype === DT_FLOAT) values = floats;
  else if (dtype === DT_DOUBLE) values = doubles;
  else if (dtype === DT_HALF) values = halves.map((h) => halfToNumber(h & 0xffff));
  return { dtype, shape, values };
}

function decodePluginName(buf: Uint8Array): string | undefined {
  let name: string | undefined;
  for (const f of wireFields(buf)) {
    if (f.field !== 1 || f.wire !== 2) continue;
    const pd = sub(buf, f);
    for (const g of wireFields(pd)) if (g.field === 1 && g.wire === 2) name = readString(pd, g.start, g.end);
  }
  return name;
}

function decodeValue(buf: Uint8Array): SummaryValue {
  let tag = "";
  let simpleValue: number | undefined;
  let tensor: TensorValue | undefined;
  let pluginName: string | undefined;
  for (const f of wireFields(buf)) {
    if (f.field === 1 && f.wire === 2) tag = readString(buf, f.start, f.end);
    else if (f.field === 2) {
      expectWire(f, 5);
      simpleValue = readFloat(buf, f.at);
    } else if (f.field === 8) tensor = decodeTensor(sub(buf, f));
    else if (f.field === 9) pluginName = decodePluginName(sub(buf, f));
  }
  return { tag, simpleValue, tensor, pluginName };
}

/** Decode one serialized `Event`. Throws `WireError` on malformed bytes. */
export function decodeEvent(buf: Uint8Array): TfEvent {
  let wallTime = 0;
  let step = 0;
  let fileVersion: string | undefined;
  const values: SummaryValue[] = [];
  for (const f of wireFields(buf)) {
    if (f.field === 1) {
      expectWire(f, 1);
      wallTime = readDouble(buf, f.at);
    } else if (f.field === 2) {
      expectWire(f, 0);
      if (f.wire === 0) step = varintToInt64(f.varint);
    } else if (f.field === 3 && f.wire === 2) fileVersion = readString(buf, f.start, f.end);
    else if (f.field === 5) {
      const s = sub(buf, f);
      for (const g of wireFields(s)) if (g.field === 1) values.push(decodeValue(sub(s, g)));
    }
  }
  return { wallTime, step, fileVersion, values };
}

/** The scalar of a summary value, if it has one: simple_value, or a one-element float tensor. */
export function scalarOf(v: SummaryValue): number | undefined {
  if (v.simpleValue !== undefined) return v.simpleValue;
  const t = v.tensor;
  if (t === undefined || t.values.length !== 1) return undefined;
  if (t.shape.some((d) => d !== 1)) return undefined;
  return t.values[0];
}

/** The scalar points of one event, in the order of its summary values. */
export function eventScalars(e: TfEvent): ScalarPoint[] {
  const out: ScalarPoint[] = [];
  for (const v of e.values) {
    const value = scalarOf(v);
    if (value !== undefined) out.push({ tag: v.tag, step: e.step, wallTime: e.wallTime, value });
  }
  return out;
}
