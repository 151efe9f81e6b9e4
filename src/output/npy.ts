// NumPy .npy format 1.0 (NEP 1): header encoding and decoding for 2-D little-endian unsigned arrays.

export type Dtype = "uint8" | "uint16" | "uint32" | "int32" | "int64";

const DESCR: Record<Dtype, string> = { uint8: "|u1", uint16: "<u2", uint32: "<u4", int32: "<i4", int64: "<i8" };
const BYTES: Record<Dtype, number> = { uint8: 1, uint16: 2, uint32: 4, int32: 4, int64: 8 };

export function dtypeBytes(d: Dtype): number {
  return BYTES[d];
}

/**
 * The header: magic, version 1.0, little-endian u16 header length, then a Python dict literal
 * padded with spaces and ended by "\n" so the data starts on a 64-byte boundary (what NumPy itself
 * writes, and what lets mmap readers align the data).
 */
export function npyHeader(dtype: Dtype, shape: readonly number[]): Uint8Array {
  const shapeText = shape.length === 1 ? `(${shape[0]},)` : `(${shape.join(", ")})`;
  let dict = `{'descr': '${DESCR[dtype]}', 'fortran_order': False, 'shape': ${shapeText}, }`;
  const pre = 10; // 6 magic + 2 version + 2 length
  const total = Math.ceil((pre + dict.length + 1) / 64) * 64;
  dict = dict.padEnd(total - pre - 1, " ") + "\n";
  if (dict.length > 0xffff) throw new Error("npy header too long for format 1.0");
  const out = new Uint8Array(total);
  out.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, 1, 0], 0); // \x93NUMPY v1.0
  out[8] = dict.length & 0xff;
  out[9] = dict.length >> 8;
  for (let i = 0; i < dict.length; i++) out[pre + i] = dict.charCodeAt(i);
  return out;
}

export interface NpyInfo {
  dtype: Dtype;
  shape: number[];
  /** Byte offset of the data. */
  offset: number;
}

/** Reads the header of a .npy file (format 1.0 or 2.0) from its first bytes. */
export function parseNpyHeader(bytes: Uint8Array): NpyInfo {
  const magic = [0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59];
  if (bytes.length < 10 || magic.some((m, i) => bytes[i] !== m)) throw new Error("not a .npy file (bad magic)");
  const major = bytes[6];
  const len = major === 1 ? bytes[8] | (bytes[9] << 8) : bytes[8] | (bytes[9] << 8) | (bytes[10] << 16) | (bytes[11] << 24);
  const start = major === 1 ? 10 : 12;
  const dict = Buffer.from(bytes.subarray(start, start + len)).toString("latin1");
  const descr = /'descr':\s*'([^']+)'/.exec(dict)?.[1];
  const shapeText = /'shape':\s*\(([^)]*)\)/.exec(dict)?.[1];
  const dtype = (Object.keys(DESCR) as Dtype[]).find((d) => DESCR[d] === descr);
  if (!dtype || shapeText === undefined) throw new Error(`unsupported .npy header: ${dict.trim()}`);
  const shape = shapeText
    .split(",")
    .map((s) => s.trim())
    .filter(Boolean)
    .map(Number);
  return { dtype, shape, offset: start + len };
}

/**
 * The little-endian bytes of `values` as `dtype` (the machine is little-endian, like every Node
 * target): a view when they are held in that type already, else a converted copy.
 */
export function encodeValues(values: Uint32Array | Uint16Array, dtype: Dtype): Uint8Array {
  if (values instanceof Uint16Array) {
    if (dtype === "uint16") return new Uint8Array(values.buffer, values.byteOffset, values.byteLength);
    values = Uint32Array.from(values);
  }
  switch (dtype) {
    case "uint8":
      return Uint8Array.from(values);
    case "uint16":
      return new Uint8Array(Uint16Array.from(values).buffer);
    case "uint32":
      return new Uint8Array(values.buffer, values.byteOffset, values.byteLength);
    case "int32":
      return new Uint8Array(Int32Array.from(values).buffer);
    case "int64":
      return new Uint8Array(BigInt64Array.from(values, (v) => BigInt(v)).buffer);
  }
}
