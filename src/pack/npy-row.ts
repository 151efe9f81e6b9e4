// Reads one row of a 2-D .npy file with positioned reads: the header, then exactly that row's bytes.
import { open } from "node:fs/promises";
import { dtypeBytes, parseNpyHeader, type NpyInfo } from "../output/npy.js";

/**
 * Row `row` of a (rows, width) array as 32-bit values. Only the header and the row are read, so a
 * shard of any size costs one small read. Throws if the file is not a 2-D .npy of a supported
 * dtype or is shorter than its header says.
 */
export async function readNpyRow(path: string, row: number): Promise<{ values: Uint32Array; info: NpyInfo }> {
  const fh = await open(path, "r");
  try {
    const head = new Uint8Array(12);
    await readExactly(fh, head, 0, path);
    // Header length: u16 at 8 in format 1.x, u32 at 8 in 2.x/3.x (NEP 1).
    const start = head[6] === 1 ? 10 : 12;
    const len = head[6] === 1 ? head[8] | (head[9] << 8) : (head[8] | (head[9] << 8) | (head[10] << 16)) + head[11] * 2 ** 24;
    const header = new Uint8Array(start + len);
    await readExactly(fh, header, 0, path);
    const info = parseNpyHeader(header);
    if (info.shape.length !== 2) throw new Error(`${path}: expected a 2-D array, shape is (${info.shape.join(", ")})`);
    const [rows, width] = info.shape;
    if (!Number.isInteger(row) || row < 0 || row >= rows) throw new Error(`${path}: row ${row} outside 0–${rows - 1}`);
    const size = dtypeBytes(info.dtype);
    // A fresh buffer, so typed views over it are aligned.
    const bytes = new Uint8Array(width * size);
    await readExactly(fh, bytes, info.offset + row * width * size, path);
    return { values: toUint32(bytes, info.dtype), info };
  } finally {
    await fh.close();
  }
}

async function readExactly(fh: Awaited<ReturnType<typeof open>>, into: Uint8Array, position: number, path: string): Promise<void> {
  let got = 0;
  while (got < into.length) {
    const { bytesRead } = await fh.read(into, got, into.length - got, position + got);
    if (bytesRead === 0) throw new Error(`${path}: file ends early (wanted ${into.length} bytes at ${position})`);
    got += bytesRead;
  }
}

function toUint32(bytes: Uint8Array, dtype: NpyInfo["dtype"]): Uint32Array {
  switch (dtype) {
    case "uint8":
      return Uint32Array.from(bytes);
    case "uint16":
      return Uint32Array.from(new Uint16Array(bytes.buffer));
    case "uint32":
      return new Uint32Array(bytes.buffer);
    case "int32":
      return Uint32Array.from(new Int32Array(bytes.buffer));
    default:
      throw new Error(`rows of dtype ${dtype} are not token or segment arrays`);
  }
}
