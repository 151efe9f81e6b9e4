// Which colour class each split and source gets; the colours themselves are in style.ts (light and dark).

/** Six series colours (s0…s5); more series than that reuse them, and the legend and tables tell them apart. */
export const SERIES = 6;

export function seriesClass(i: number): string {
  return `s${i % SERIES}`;
}

/** train, val and test keep their colours in every chart of the report; other split names follow. */
export function splitClass(name: string, index: number): string {
  const fixed = ["train", "val", "test"].indexOf(name);
  return seriesClass(fixed >= 0 ? fixed : 3 + index);
}

/** Sources take the colours train, val and test do not use first, so a source is rarely mistaken for a split. */
const SOURCE_ORDER = [4, 3, 5, 2, 1, 0];

export function sourceClass(index: number): string {
  return seriesClass(SOURCE_ORDER[index % SERIES]);
}
