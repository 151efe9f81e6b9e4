// A file name not yet taken: the name itself, else -2, -3 … before its extension (clusters-2.jsonl).
export function freeName(name: string, taken: (candidate: string) => boolean): string {
  let candidate = name;
  for (let n = 2; taken(candidate); n++) candidate = name.replace(/(\.[^.]*)?$/, (ext) => `-${n}${ext}`);
  return candidate;
}
