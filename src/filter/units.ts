// The units the filter rules measure: words, non-blank lines, paragraphs, lengths in code points.
// Words are runs of non-space characters, except in text written without spaces (Chinese, Japanese,
// Thai, …), where they are the word segments of ICU's segmenter (Intl.Segmenter, part of Node).

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

// Letters of the scripts written without spaces between words (Chinese, Japanese, Thai, Lao, Khmer,
// Myanmar; common practice). Korean (Hangul) is written with spaces and is not among them.
const SPACELESS = /[\p{Script=Han}\p{Script=Hiragana}\p{Script=Katakana}\p{Script=Thai}\p{Script=Lao}\p{Script=Khmer}\p{Script=Myanmar}]/gu;
const LETTERS = /\p{L}/gu;
/**
 * A quick first look: the Unicode blocks of those scripts (Thai, Lao, Myanmar and its extensions,
 * Khmer and its symbols, CJK from U+2E80 to U+9FFF, compatibility ideographs, halfwidth katakana, and
 * the supplementary planes' ideographs and kana by their high surrogates; block ranges from memory of
 * the Unicode standard's Blocks.txt). A superset: the letters are then checked by script property.
 */
const BLOCKS = /[\u0E00-\u0EFF\u1000-\u109F\u1780-\u17FF\u19E0-\u19FF\u2E80-\u9FFF\uA9E0-\uA9FF\uAA60-\uAA7F\uF900-\uFAFF\uFF66-\uFF9F\uD82C\uD840-\uD8BF]/;
/** Characters looked at to decide: the start of the text says what it is written in. */
const SAMPLE = 4096;

/** True when most letters of the text (its first 4096 UTF-16 units) belong to a script written without spaces. */
export function isSpaceless(text: string): boolean {
  const sample = text.length > SAMPLE ? text.slice(0, SAMPLE) : text;
  // Counted with native matching: a loop over code points cost a fifth of the filter's speed on English.
  if (!BLOCKS.test(sample)) return false;
  const spaceless = sample.match(SPACELESS)?.length ?? 0;
  return spaceless > 0 && spaceless * 2 > (sample.match(LETTERS)?.length ?? 0);
}

const segmenters = new Map<string, Intl.Segmenter>();
/** A word segmenter for the language (ICU's, built into Node: dictionary-based for Chinese, Japanese, Thai …). */
function segmenterFor(language: string | undefined): Intl.Segmenter {
  const key = language ?? "";
  let s = segmenters.get(key);
  if (!s) {
    try {
      s = new Intl.Segmenter(language, { granularity: "word" });
    } catch {
      s = new Intl.Segmenter(undefined, { granularity: "word" }); // a label ICU does not take: its default rules
    }
    segmenters.set(key, s);
  }
  return s;
}

/** The words of text in a script written without spaces: ICU's word-like segments (punctuation and spaces left out). */
export function segmentWords(text: string, language?: string): string[] {
  const out: string[] = [];
  for (const s of segmenterFor(language).segment(text)) if (s.isWordLike) out.push(s.segment);
  return out;
}

/** Words as the filter counts them: whitespace runs, or ICU word segments for text written without spaces. */
export function filterWords(text: string, language?: string): string[] {
  return isSpaceless(text) ? segmentWords(text, language) : splitWords(text);
}

/** One document's measurements, each computed on first use and shared by the rules that need it. */
export class DocView {
  private _words?: string[];
  private _wordChars?: Int32Array;
  private _lines?: string[];
  private _paragraphs?: string[];
  private _spaceless?: boolean;

  /** `language`: the record's language label (meta.language), when known. */
  constructor(
    readonly text: string,
    readonly language?: string,
  ) {}

  /** Written without spaces between words (see isSpaceless): words are then ICU's word segments. */
  get spaceless(): boolean {
    return (this._spaceless ??= isSpaceless(this.text));
  }
  get words(): string[] {
    return (this._words ??= this.spaceless ? segmentWords(this.text, this.language) : splitWords(this.text));
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
