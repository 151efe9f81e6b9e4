// JSON array reader: streams the elements of one top-level array (stream-json), one object per record.

import { jsonParser } from "stream-json/core/parser.js";
import streamArray from "stream-json/core/streamers/stream-array.js";
import { InputReadError, openInput, readChunks, truncationOf } from "./open.js";
import type { ReaderOptions } from "./reader.js";
import { truncatedRow, type Row } from "./row.js";
import { Utf8Pieces, type Utf8Piece } from "./utf8.js";
import { isJsonObject, kindOf } from "./values.js";

// stream-json stages are plain functions returning one value, "none" or "many" (marked with
// registered symbols from stream-chain); reading the marks via Symbol.for avoids importing
// stream-chain, which is stream-json's dependency, not ours. Passing NONE flushes a stage.
type Stage = (input: unknown) => unknown;
const NONE = Symbol.for("object-stream.none");
const MANY = Symbol.for("object-stream.many");

function outputs<T>(out: unknown): T[] {
  if (out === NONE || out === undefined) return [];
  if (typeof out === "object" && out !== null && (out as Record<symbol, unknown>)[MANY] === 1) {
    return (out as { values: T[] }).values;
  }
  return [out as T];
}

interface Token {
  name: string;
  value?: unknown;
}

/** The file cannot be parsed further; `line` is the element it stopped in (0 = the file as a whole). */
class JsonStop extends Error {
  constructor(readonly line: number, message: string) {
    super(message);
  }
}

const TOP_LEVEL_KINDS: Record<string, string> = {
  startObject: "an object",
  stringValue: "a string",
  numberValue: "a number",
  trueValue: "a boolean",
  falseValue: "a boolean",
  nullValue: "null",
};

/** Parser state for one file: which element is in progress and which ones held invalid UTF-8. */
class ArrayState {
  private readonly parse = jsonParser({ streamValues: false }) as unknown as Stage;
  private readonly elements = streamArray() as unknown as Stage;
  private depth = 0;
  private started = false;
  private closed = false;
  private atStart = true;
  /** Whether the file held anything but whitespace. */
  content = false;
  /** Elements completed so far (good or bad); the one in progress is done + 1. */
  done = 0;
  private readonly tainted = new Map<number, number>(); // element -> byte offset of its first invalid byte

  *take(piece: Utf8Piece): Generator<Row> {
    if (typeof piece !== "string") {
      this.content = true;
      // Only an element can absorb a bad byte; anywhere else the U+FFFD makes the parser stop below.
      if (!this.closed && !this.tainted.has(this.done + 1)) this.tainted.set(this.done + 1, piece.invalidAt);
      yield* this.feed("\uFFFD");
      return;
    }
    let text = piece;
    if (this.atStart) {
      this.atStart = false;
      if (text.charCodeAt(0) === 0xfeff) text = text.slice(1);
    }
    if (!this.content && /[^ \t\r\n]/.test(text)) this.content = true;
    yield* this.feed(text);
  }

  *finish(): Generator<Row> {
    if (!this.content) throw new JsonStop(0, "empty file");
    try {
      yield* this.consume(this.parse(NONE));
    } catch (err) {
      if (err instanceof JsonStop) throw err;
      if (!this.started) throw new JsonStop(0, `not a JSON array: ${describeParserError(err)}`);
      throw new JsonStop(this.done + 1, "truncated JSON: the file ends before the array is closed");
    }
  }

  /**
   * The parser throws away every token of a call that fails, so text is fed in slices ending
   * just after each "}" or "]": an element's (or the array's) closing bracket is then always
   * parsed, and the element emitted, before any later syntax error is seen.
   */
  private *feed(text: string): Generator<Row> {
    const closer = /[}\]]/g;
    let start = 0;
    while (closer.exec(text) !== null) {
      yield* this.parseSlice(text.slice(start, closer.lastIndex));
      start = closer.lastIndex;
    }
    if (start < text.length) yield* this.parseSlice(text.slice(start));
  }

  private *parseSlice(text: string): Generator<Row> {
    let out: unknown;
    try {
      out = this.parse(text);
    } catch (err) {
      if (this.closed) throw new JsonStop(0, "trailing content after the JSON array");
      if (!this.started) throw new JsonStop(0, `not a JSON array: ${describeParserError(err)}`);
      throw new JsonStop(this.done + 1, `${describeParserError(err)} (the rest of the file is skipped)`);
    }
    yield* this.consume(out);
  }

  private *consume(out: unknown): Generator<Row> {
    for (const token of outputs<Token>(out)) {
      if (!this.started) {
        if (token.name !== "startArray") {
          throw new JsonStop(0, `not a JSON array: the top-level value is ${TOP_LEVEL_KINDS[token.name] ?? "not an array"}`);
        }
        this.started = true;
      }
      if (token.name === "startObject" || token.name === "startArray") this.depth++;
      else if (token.name === "endObject" || token.name === "endArray") {
        if (--this.depth === 0) this.closed = true;
      }
      for (const item of outputs<{ key: number; value: unknown }>(this.elements(token))) yield this.row(item.key + 1, item.value);
    }
  }

  private row(line: number, value: unknown): Row {
    this.done = line;
    const badByte = this.tainted.get(line);
    if (badByte !== undefined) {
      this.tainted.delete(line);
      return { line, error: `invalid UTF-8 at byte offset ${badByte}` };
    }
    if (!isJsonObject(value)) return { line, error: `expected a JSON object, got ${kindOf(value)}` };
    return { line, fields: value };
  }
}

/** "Parser cannot parse input: expected ','" -> "malformed JSON: expected ','". */
function describeParserError(err: unknown): string {
  const message = err instanceof Error ? err.message : String(err);
  return `malformed JSON: ${message.replace(/^Parser (cannot parse input: |has )/, "")}`;
}

/**
 * Rows of a .json (or .json.gz) file holding one top-level array; `line` is the 1-based element.
 * - A non-object element is a bad row for that element; the array goes on.
 * - Invalid UTF-8 quarantines the element that contains it: the bad byte is parsed as U+FFFD so
 *   the parser can continue, and the element is reported instead of emitted. A bad byte outside
 *   any string breaks the JSON syntax and is reported like any syntax error.
 * - A syntax error or truncation yields one bad row at the element it stopped in (line 0 if the
 *   file is not an array at all, or the damage is after the array) and ends the file; elements
 *   before it have already been yielded.
 * - A read failure (a cut or corrupt .gz/.zst, a disk error) yields a truncated row and ends the
 *   file. (An uncompressed file cut short is a syntax error: nothing says it was cut.)
 * - A file with nothing but whitespace (or 0 bytes) is { line: 0, error: "empty file" }; `[]` yields nothing.
 * Each element is assembled whole in memory; maxRecordBytes does not apply.
 */
export async function* readJson(file: string, _options: ReaderOptions = {}): AsyncGenerator<Row> {
  const input = await openInput(file);
  const decoder = new Utf8Pieces();
  const state = new ArrayState();
  try {
    for await (const chunk of readChunks(input)) {
      for (const piece of decoder.push(chunk)) yield* state.take(piece);
    }
    for (const piece of decoder.end()) yield* state.take(piece);
    yield* state.finish();
  } catch (err) {
    if (err instanceof JsonStop) yield { line: err.line, error: err.message };
    else if (err instanceof InputReadError) yield truncatedRow(state.done + 1, truncationOf(err));
    else throw err;
  } finally {
    input.destroy();
  }
}
