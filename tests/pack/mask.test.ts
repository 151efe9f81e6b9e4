// The mask picture's geometry equals the attention rule, and its PNG is a valid file that NumPy reads back as that mask.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { writeFileSync } from "node:fs";
import { join } from "node:path";
import { maskShapes } from "../../src/pack/mask-shape.js";
import { maskPng } from "../../src/pack/mask-png.js";
import { maskSvg } from "../../src/pack/mask-svg.js";
import { python, tempDir } from "../e2e/cli.js";

/** Even-odd ray casting: is (x, y) inside the polygon? */
function inside(points: [number, number][], x: number, y: number): boolean {
  let c = false;
  for (let a = 0, b = points.length - 1; a < points.length; b = a++) {
    const [xa, ya] = points[a];
    const [xb, yb] = points[b];
    if (ya > y !== yb > y && x < ((xb - xa) * (y - ya)) / (yb - ya) + xa) c = !c;
  }
  return c;
}

/** A row's segments: pieces of the given lengths numbered 1.., then padding to `length`. */
const row = fc
  .tuple(fc.array(fc.integer({ min: 1, max: 9 }), { minLength: 1, maxLength: 6 }), fc.integer({ min: 0, max: 7 }))
  .map(([lens, pad]) => [...lens.flatMap((n, k) => Array(n).fill(k + 1)), ...Array(pad).fill(0)] as number[]);

const allowed = (seg: number[], i: number, j: number) => j <= i && seg[i] === seg[j] && seg[i] !== 0;

describe("mask picture", () => {
  it("with one token per step, the polygons cover exactly the cells where attention is allowed", () => {
    fc.assert(
      fc.property(row, (seg) => {
        const shapes = maskShapes(seg, 1);
        for (let i = 0; i < seg.length; i++)
          for (let j = 0; j < seg.length; j++) {
            const hits = shapes.filter((s) => inside(s.points, j + 0.5, i + 0.5));
            expect(hits.length).toBe(allowed(seg, i, j) ? 1 : 0);
            if (hits.length) expect(hits[0].segment).toBe(seg[i]);
          }
      }),
      { numRuns: 200 },
    );
  });

  it("downsampled outlines contain the exact mask and stay within one step of it, inside the piece's square", () => {
    fc.assert(
      fc.property(row, fc.integer({ min: 2, max: 5 }), (seg, step) => {
        const shapes = maskShapes(seg, step);
        for (let i = 0; i < seg.length; i++)
          for (let j = 0; j < seg.length; j++) {
            const hit = shapes.find((s) => inside(s.points, j + 0.5, i + 0.5));
            if (allowed(seg, i, j)) expect(hit).toBeDefined();
            if (hit) {
              const far = Math.max(hit.end, Math.min(seg.length, hit.start + step));
              expect(i >= hit.start && i < far && j >= hit.start && j < far && j < i + step).toBe(true);
            }
          }
      }),
      { numRuns: 200 },
    );
  });

  it("the SVG has one path per piece and says when it is downsampled", () => {
    const seg = [1, 1, 1, 2, 2, 0, 0, 0];
    const small = maskSvg(seg, { title: "t <&>" });
    expect(small.svg.match(/<path /g)).toHaveLength(2);
    expect(small.svg).toContain("t &lt;&amp;&gt;");
    expect(small.step).toBe(1);
    expect(small.scale).toBe(100);
    const long = Array.from({ length: 5000 }, (_, i) => 1 + Math.floor(i / 1000));
    const big = maskSvg(long, { title: "long" });
    expect(big.step).toBe(7);
    expect(big.svg).toContain("downsampled, 7 tokens per pixel step");
    expect(big.svg.length).toBeLessThan(60_000);
  });

  it("the PNG is valid (chunk CRCs by Python's zlib) and NumPy's mask from segments matches its pixels", () => {
    // Reference: Python's zlib.crc32 / zlib.decompress and NumPy, reading the PNG by the W3C PNG spec's chunk layout.
    const dir = tempDir("maskpng");
    const cases = [
      [1, 1, 1, 2, 2, 3, 0, 0],
      Array.from({ length: 700 }, (_, i) => (i < 650 ? 1 + Math.floor(i / 100) : 0)),
      Array.from({ length: 2000 }, (_, i) => 1 + Math.floor(i / 3)), // 667 tiny pieces, downsampled
    ];
    cases.forEach((seg, k) => {
      writeFileSync(join(dir, `${k}.png`), maskPng(seg).png);
      writeFileSync(join(dir, `${k}.json`), JSON.stringify(seg));
    });
    const report = python(
      `import json, struct, sys, zlib, numpy as np
out = []
for k in range(int(sys.argv[2])):
    b = open(f"{sys.argv[1]}/{k}.png", "rb").read()
    assert b[:8] == b"\\x89PNG\\r\\n\\x1a\\n"
    at, chunks = 8, {}
    while at < len(b):
        n, = struct.unpack(">I", b[at:at+4]); t = b[at+4:at+8]; data = b[at+8:at+8+n]
        crc, = struct.unpack(">I", b[at+8+n:at+12+n])
        assert crc == zlib.crc32(t + data), t
        chunks[t] = chunks.get(t, b"") + data; at += 12 + n
    w, h, depth, ctype = struct.unpack(">IIBB", chunks[b"IHDR"][:10])
    raw = np.frombuffer(zlib.decompress(chunks[b"IDAT"]), dtype=np.uint8).reshape(h, 1 + 3 * w)
    assert (raw[:, 0] == 0).all()
    img = raw[:, 1:].reshape(h, w, 3)
    seg = np.array(json.load(open(f"{sys.argv[1]}/{k}.json")), dtype=np.int64); L = len(seg)
    side = L * max(1, 800 // L) if L <= 800 else 800
    area = img[12:12 + side, 12:12 + side]
    painted = (area != 255).any(axis=2)
    # NumPy's own mask: causal and same document, padding excluded.
    attend = np.tril(np.ones((L, L), dtype=bool)) & (seg[:, None] == seg[None, :]) & (seg[:, None] != 0)
    if side % L == 0:
        s = side // L
        ok = bool((painted == attend.repeat(s, 0).repeat(s, 1)).all())
    else:
        # Downsampled: a pixel is painted iff its block of tokens holds an allowed pair.
        e = [int(np.floor(p * L / side)) for p in range(side + 1)]
        ok = all(painted[y, x] == attend[e[y]:max(e[y] + 1, e[y + 1]), e[x]:max(e[x] + 1, e[x + 1])].any() for y in range(0, side, 7) for x in range(0, side, 7))
    out.append([w, h, depth, ctype, ok])
print(json.dumps(out))`,
      [dir, String(cases.length)],
    );
    expect(JSON.parse(report)).toEqual([
      [824, 824, 8, 2, true],
      [724, 724, 8, 2, true],
      [824, 824, 8, 2, true],
    ]);
  });
});
