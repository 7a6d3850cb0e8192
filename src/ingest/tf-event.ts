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
import { halfToNumber, readDouble, readFloat, readVarint, varintToInt32, varintToInt64, WireError, WireReader } from "./protobuf.js";

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

function expectWire(r: WireReader, wire: number): void {
  if (r.wire !== wire) throw new WireError(`field ${r.field} has wire type ${r.wire}, expected ${wire}`, r.at);
}

/** Repeated numeric field at the cursor, packed (one length-delimited run) or not (one element per field). */
function pushRepeated(r: WireReader, width: 0 | 4 | 8, out: number[]): void {
  if (r.wire === 2) {
    if (width === 0) {
      for (let at = r.start; at < r.end; ) {
        const v = readVarint(r.buf, at, r.end);
        out.push(varintToInt32(v.value));
        at = v.next;
      }
      return;
    }
    if ((r.end - r.start) % width !== 0) throw new WireError(`packed field ${r.field} is not a whole number of ${width}-byte values`, r.at);
    for (let at = r.start; at < r.end; at += width) out.push(width === 4 ? readFloat(r.buf, at) : readDouble(r.buf, at));
  } else if (r.wire === 0 && width === 0) {
    out.push(varintToInt32(r.varint));
  } else if ((r.wire === 5 && width === 4) || (r.wire === 1 && width === 8)) {
    out.push(width === 4 ? r.float() : r.double());
  } else {
    throw new WireError(`repeated field ${r.field} has wire type ${r.wire}`, r.at);
  }
}

function message(r: WireReader): WireReader {
  expectWire(r, 2);
  return new WireReader(r.buf, r.start, r.end);
}

function decodeShape(shape: WireReader): number[] {
  const dims: number[] = [];
  while (shape.next()) {
    if (shape.field !== 2) continue;
    const dim = message(shape);
    let size = 0;
    while (dim.next()) if (dim.field === 1 && dim.wire === 0) size = varintToInt64(dim.varint);
    dims.push(size);
  }
  return dims;
}

function contentValues(c: Uint8Array, dtype: number): number[] {
  const width = dtype === DT_FLOAT ? 4 : dtype === DT_DOUBLE ? 8 : dtype === DT_HALF ? 2 : 0;
  if (width === 0) return [];
  if (c.length % width !== 0) throw new WireError(`tensor_content has ${c.length} bytes, not a multiple of ${width}`, 0);
  const dv = new DataView(c.buffer, c.byteOffset, c.byteLength);
  const values: number[] = [];
  for (let at = 0; at < c.length; at += width) {
    values.push(width === 4 ? dv.getFloat32(at, true) : width === 8 ? dv.getFloat64(at, true) : halfToNumber(dv.getUint16(at, true)));
  }
  return values;
}

/** Decode a serialized TensorProto (the fields listed in the module comment). */
export function decodeTensor(buf: Uint8Array): TensorValue {
  return readTensor(new WireReader(buf));
}

function readTensor(r: WireReader): TensorValue {
  let dtype = 0;
  let shape: number[] = [];
  let content: Uint8Array | undefined;
  const floats: number[] = [];
  const doubles: number[] = [];
  const halves: number[] = [];
  while (r.next()) {
    if (r.field === 1) {
      expectWire(r, 0);
      dtype = Number(r.varint);
    } else if (r.field === 2) shape = decodeShape(message(r));
    else if (r.field === 4) {
      expectWire(r, 2);
      content = r.bytes();
    }
    else if (r.field === 5) pushRepeated(r, 4, floats);
    else if (r.field === 6) pushRepeated(r, 8, doubles);
    else if (r.field === 13) pushRepeated(r, 0, halves);
  }
  let values: number[];
  if (content !== undefined && content.length > 0) values = contentValues(content, dtype);
  else if (dtype === DT_FLOAT) values = floats;
  else if (dtype === DT_DOUBLE) values = doubles;
  else if (dtype === DT_HALF) values = halves.map((h) => halfToNumber(h & 0xffff));
  else values = [];
  return { dtype, shape, values };
}

function decodePluginName(meta: WireReader): string | undefined {
  let name: string | undefined;
  while (meta.next()) {
    if (meta.field !== 1 || meta.wire !== 2) continue;
    const pd = message(meta);
    while (pd.next()) if (pd.field === 1 && pd.wire === 2) name = pd.string();
  }
  return name;
}

function decodeValue(r: WireReader): SummaryValue {
  let tag = "";
  let simpleValue: number | undefined;
  let tensor: TensorValue | undefined;
  let pluginName: string | undefined;
  while (r.next()) {
    if (r.field === 1 && r.wire === 2) tag = r.string();
    else if (r.field === 2) {
      expectWire(r, 5);
      simpleValue = r.float();
    } else if (r.field === 8) tensor = readTensor(message(r));
    else if (r.field === 9) pluginName = decodePluginName(message(r));
  }
  return { tag, simpleValue, tensor, pluginName };
}

/** Decode one serialized `Event`. Throws `WireError` on malformed bytes. */
export function decodeEvent(buf: Uint8Array): TfEvent {
  let wallTime = 0;
  let step = 0;
  let fileVersion: string | undefined;
  const values: SummaryValue[] = [];
  const r = new WireReader(buf);
  while (r.next()) {
    if (r.field === 1) {
      expectWire(r, 1);
      wallTime = r.double();
    } else if (r.field === 2) {
      expectWire(r, 0);
      step = varintToInt64(r.varint);
    } else if (r.field === 3 && r.wire === 2) fileVersion = r.string();
    else if (r.field === 5) {
      const summary = message(r);
      while (summary.next()) if (summary.field === 1) values.push(decodeValue(message(summary)));
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
