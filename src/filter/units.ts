// The units the filter rules measure: words, non-blank lines, paragraphs, lengths in code points.

/** The spaces that separate words: ASCII whitespace, no-break space, ideographic space and the U+2000–U+200A spaces. */
function isSpace(c: number): boolean {
  return c === 32 || (c >= 9 && c <= 13) || c === 0xa0 || c === 0x3000 || (c >= 0x2000 && c <= 0x200a);
}

/** Words are maximal runs of non-space characters (common practice for length filters). */
export function countWords(text: string): number {
  let n = 0;
  let inWord = false;
  for (let i = 0; i < text.length; i++) {
    if (isSpace(text.charCodeAt(i))) inWord = false;
    else if (!inWord) {
      inWord = true;
      n++;
    }
  }
  return n;
}

/** The words themselves, by the same definition as countWords (punctuation stays attached). */
export function splitWords(text: string): string[] {
  const words: string[] = [];
  let start = -1;
  for (let i = 0; i < text.length; i++) {
    if (isSpace(text.charCodeAt(i))) {
      if (start >= 0) words.push(text.slice(start, i));
      start = -1;
    } else if (start < 0) start = i;
  }
  if (start >= 0) words.push(text.slice(start));
  return words;
}

/** Length in code points, without allocating (UTF-16 length minus low surrogates of pairs). */
export function codePoints(text: string): number {
  let n = text.length;
  for (let i = 1; i < text.length; i++) {
    const c = text.charCodeAt(i);
    if (c >= 0xdc00 && c <= 0xdfff) {
      const p = text.charCodeAt(i - 1);
      if (p >= 0xd800 && p <= 0xdbff) n--;
    }
  }
  return n;
}

/** Lines with their trailing whitespace removed; lines holding only whitespace are not counted. */
export function contentLines(text: string): string[] {
  const out: string[] = [];
  for (const line of text.split("\n")) {
    const t = line.trimEnd();
    if (t.trim() !== "") out.push(t);
  }
  return out;
}

/** Paragraphs: blocks separated by one or more blank (whitespace-only) lines, trimmed; empty ones dropped. */
export function paragraphs(text: string): string[] {
  return text
    .split(/\n[ \t\u00a0\u3000\r\f\v]*\n/)
    .map((p) => p.trim())
    .filter((p) => p !== "");
}

/** One document's measurements, each computed on first use and shared by the rules that need it. */
export class DocView {
  private _words?: string[];
  private _wordChars?: Int32Array;
  private _lines?: string[];
  private _paragraphs?: string[];

  constructor(readonly text: string) {}

  get words(): string[] {
    return (this._words ??= splitWords(this.text));
  }
  /** The length of each word in code points. */
  get wordChars(): Int32Array {
    if (!this._wordChars) {
      const words = this.words;
      this._wordChars = new Int32Array(words.length);
      for (let i = 0; i < words.length; i++) this._wordChars[i] = codePoints(words[i]);
    }
    return this._wordChars;
  }
  get lines(): string[] {
    return (this._lines ??= contentLines(this.text));
  }
  get paragraphs(): string[] {
    return (this._paragraphs ??= paragraphs(this.text));
  }
}
