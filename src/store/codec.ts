/**
 * Encodings between Plumbline's in-memory values and what PostgreSQL keeps.
 *
 * - Value samples (Float64Array) become bytea: little-endian IEEE 754 float64, 8 bytes
 *   per value, so every bit survives (-0, subnormals) whatever the machine's byte order.
 * - Everything else of a profile goes to jsonb. JSON has no NaN, infinities, -0 or
 *   typed arrays (JSON.stringify writes null, null, 0 and an object of indices), and
 *   bin edges often start at -Infinity; those values are written as small tagged
 *   objects and restored on read. A Map (category counts) is a tagged list of [key, value]
 *   pairs, so a category named `__proto__` or `constructor` is a key like any other. No
 *   JSON library in the project does this, hence the few lines here.
 */
import { endianness } from 'node:os';
import { StoreError } from '../errors.ts';

/** Packs values as little-endian float64. */
export function float64ToBytes(values: Float64Array): Buffer {
  const out = Buffer.allocUnsafe(values.length * 8);
  for (let i = 0; i < values.length; i++) out.writeDoubleLE(values[i]!, i * 8);
  return out;
}

/** Unpacks little-endian float64 values (a copy: the result owns its buffer). */
export function bytesToFloat64(bytes: Uint8Array): Float64Array {
  if (bytes.byteLength % 8 !== 0) throw new StoreError(`a stored sample has ${bytes.byteLength} bytes, not a multiple of 8`);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const out = new Float64Array(bytes.byteLength / 8);
  for (let i = 0; i < out.length; i++) out[i] = view.getFloat64(i * 8, true);
  return out;
}

/** Key of a tagged value; a tagged value is an object with exactly the keys TAG and `v`. */
const TAG = '$plumbline';

type TypedArrayName = 'Float64Array' | 'Float32Array' | 'Int32Array' | 'Uint32Array' | 'Uint8Array';
const TYPED: Record<TypedArrayName, { bytes: number; make: (n: number) => ArrayLike<number> & { [i: number]: number } }> = {
  Float64Array: { bytes: 8, make: (n) => new Float64Array(n) },
  Float32Array: { bytes: 4, make: (n) => new Float32Array(n) },
  Int32Array: { bytes: 4, make: (n) => new Int32Array(n) },
  Uint32Array: { bytes: 4, make: (n) => new Uint32Array(n) },
  Uint8Array: { bytes: 1, make: (n) => new Uint8Array(n) },
};

function typedArrayName(value: ArrayBufferView): TypedArrayName | null {
  if (value instanceof Float64Array) return 'Float64Array';
  if (value instanceof Float32Array) return 'Float32Array';
  if (value instanceof Int32Array) return 'Int32Array';
  if (value instanceof Uint32Array) return 'Uint32Array';
  if (value instanceof Uint8Array && !Buffer.isBuffer(value)) return 'Uint8Array';
  return null;
}

const LITTLE_ENDIAN = endianness() === 'LE';

function typedToBase64(name: TypedArrayName, value: ArrayBufferView & ArrayLike<number>): string {
  // A little-endian platform holds the values in the stored byte order already: no copy.
  if (LITTLE_ENDIAN) return Buffer.from(value.buffer, value.byteOffset, value.byteLength).toString('base64');
  const n = value.length;
  const buf = Buffer.allocUnsafe(n * TYPED[name].bytes);
  for (let i = 0; i < n; i++) {
    const x = value[i]!;
    if (name === 'Float64Array') buf.writeDoubleLE(x, i * 8);
    else if (name === 'Float32Array') buf.writeFloatLE(x, i * 4);
    else if (name === 'Int32Array') buf.writeInt32LE(x, i * 4);
    else if (name === 'Uint32Array') buf.writeUInt32LE(x, i * 4);
    else buf.writeUInt8(x, i);
  }
  return buf.toString('base64');
}

function typedFromBase64(name: TypedArrayName, b64: string): unknown {
  const buf = Buffer.from(b64, 'base64');
  const size = TYPED[name].bytes;
  if (buf.length % size !== 0) throw new StoreError(`a stored ${name} has ${buf.length} bytes, not a multiple of ${size}`);
  const out = TYPED[name].make(buf.length / size);
  for (let i = 0; i < buf.length / size; i++) {
    if (name === 'Float64Array') out[i] = buf.readDoubleLE(i * 8);
    else if (name === 'Float32Array') out[i] = buf.readFloatLE(i * 4);
    else if (name === 'Int32Array') out[i] = buf.readInt32LE(i * 4);
    else if (name === 'Uint32Array') out[i] = buf.readUInt32LE(i * 4);
    else out[i] = buf.readUInt8(i);
  }
  return out;
}

const SPECIAL_NUMBERS: Record<string, number> = { NaN: Number.NaN, Infinity: Number.POSITIVE_INFINITY, '-Infinity': Number.NEGATIVE_INFINITY, '-0': -0 };

/** A JSON-safe copy of `value` with non-finite numbers, -0 and typed arrays tagged. */
export function encodeJson(value: unknown): unknown {
  if (typeof value === 'number') {
    if (Number.isFinite(value) && !Object.is(value, -0)) return value;
    return { [TAG]: 'number', v: Object.is(value, -0) ? '-0' : String(value) };
  }
  if (value === null || typeof value !== 'object') return value;
  if (ArrayBuffer.isView(value)) {
    const name = typedArrayName(value);
    if (name === null) throw new StoreError(`cannot store a ${value.constructor.name} as JSON`);
    return { [TAG]: name, v: typedToBase64(name, value as ArrayBufferView & ArrayLike<number>) };
  }
  if (Array.isArray(value)) return value.map(encodeJson);
  if (value instanceof Map) return { [TAG]: 'Map', v: [...value].map(([k, v]) => [k, encodeJson(v)]) };
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(value)) {
    if (v !== undefined) setOwn(out, k, encodeJson(v));
  }
  return out;
}

/** out[k] = v as an own property, even for k = "__proto__" (plain assignment would set the prototype). */
function setOwn(out: Record<string, unknown>, k: string, v: unknown): void {
  Object.defineProperty(out, k, { value: v, enumerable: true, writable: true, configurable: true });
}

/** Reverses encodeJson. */
export function decodeJson(value: unknown): unknown {
  if (value === null || typeof value !== 'object') return value;
  if (Array.isArray(value)) return value.map(decodeJson);
  const obj = value as Record<string, unknown>;
  const keys = Object.keys(obj);
  const tag = obj[TAG];
  if (keys.length === 2 && tag === 'Map' && Array.isArray(obj['v'])) {
    return new Map((obj['v'] as [string, unknown][]).map(([k, v]) => [k, decodeJson(v)]));
  }
  if (keys.length === 2 && typeof tag === 'string' && typeof obj['v'] === 'string') {
    if (tag === 'number' && obj['v'] in SPECIAL_NUMBERS) return SPECIAL_NUMBERS[obj['v']];
    if (tag in TYPED) return typedFromBase64(tag as TypedArrayName, obj['v']);
  }
  const out: Record<string, unknown> = {};
  for (const k of keys) setOwn(out, k, decodeJson(obj[k]));
  return out;
}
