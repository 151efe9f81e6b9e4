// Decodes an 8-bit RGB or RGBA PNG (as browsers write screenshots) into pixels, for checking that a screenshot shows something.
// Format: the PNG specification (ISO/IEC 15948), chunks IHDR/IDAT/IEND, zlib data, per-row filters 0–4.
import { inflateSync } from "node:zlib";

export interface Pixels {
  width: number;
  height: number;
  /** RGBA, 4 bytes a pixel. */
  rgba: Uint8Array;
}

export function decodePng(png: Buffer): Pixels {
  if (png.subarray(0, 8).toString("latin1") !== "\x89PNG\r\n\x1a\n") throw new Error("not a PNG");
  let pos = 8;
  let width = 0;
  let height = 0;
  let colorType = 0;
  const idat: Buffer[] = [];
  while (pos < png.length) {
    const len = png.readUInt32BE(pos);
    const type = png.subarray(pos + 4, pos + 8).toString("latin1");
    const data = png.subarray(pos + 8, pos + 8 + len);
    if (type === "IHDR") {
      width = data.readUInt32BE(0);
      height = data.readUInt32BE(4);
      if (data[8] !== 8 || data[12] !== 0) throw new Error("only 8-bit, non-interlaced PNGs");
      colorType = data[9];
      if (colorType !== 2 && colorType !== 6) throw new Error(`colour type ${colorType} not handled`);
    } else if (type === "IDAT") idat.push(data);
    else if (type === "IEND") break;
    pos += 12 + len;
  }
  const bpp = colorType === 6 ? 4 : 3;
  const raw = inflateSync(Buffer.concat(idat));
  const stride = width * bpp;
  const out = new Uint8Array(width * height * 4);
  let prev = new Uint8Array(stride);
  for (let y = 0; y < height; y++) {
    const filter = raw[y * (stride + 1)];
    const line = raw.subarray(y * (stride + 1) + 1, (y + 1) * (stride + 1));
    const cur = new Uint8Array(stride);
    for (let i = 0; i < stride; i++) {
      const a = i >= bpp ? cur[i - bpp] : 0;
      const b = prev[i];
      const c = i >= bpp ? prev[i - bpp] : 0;
      let p = 0;
      if (filter === 1) p = a;
      else if (filter === 2) p = b;
      else if (filter === 3) p = (a + b) >> 1;
      else if (filter === 4) {
        const pa = Math.abs(b - c);
        const pb = Math.abs(a - c);
        const pc = Math.abs(a + b - 2 * c);
        p = pa <= pb && pa <= pc ? a : pb <= pc ? b : c;
      }
      cur[i] = (line[i] + p) & 0xff;
    }
    for (let x = 0; x < width; x++) {
      for (let k = 0; k < 3; k++) out[(y * width + x) * 4 + k] = cur[x * bpp + k];
      out[(y * width + x) * 4 + 3] = bpp === 4 ? cur[x * bpp + 3] : 255;
    }
    prev = cur;
  }
  return { width, height, rgba: out };
}

/** Share of pixels that differ from the most common colour, and how many colours there are. */
export function inkStats(p: Pixels): { ink: number; colours: number } {
  const counts = new Map<number, number>();
  for (let i = 0; i < p.rgba.length; i += 4) {
    const c = (p.rgba[i] << 16) | (p.rgba[i + 1] << 8) | p.rgba[i + 2];
    counts.set(c, (counts.get(c) ?? 0) + 1);
  }
  const background = Math.max(...counts.values());
  return { ink: 1 - background / (p.width * p.height), colours: counts.size };
}
