// Byte-level CSV/TSV record scanner: RFC 4180 quoting, physical line numbers, bounded memory per record.

import { formatBytes } from "./reader.js";

const LF = 0x0a;
const CR = 0x0d;
const QUOTE = 0x22;

// Scanner states.
const FIELD_START = 0;
const UNQUOTED = 1;
const QUOTED = 2;
const QUOTE_IN_QUOTED = 3; // a quote seen inside a quoted field: closing, or the first of ""

/** One record with its fields still as bytes; `line` is the physical line it starts on (1-based). */
export interface RawRecord {
  line: number;
  fields: Buffer[];
  /** Set when the record is malformed or too long; its fields are then unusable. */
  error?: string;
}

const EMPTY = Buffer.alloc(0);

/**
 * Splits bytes into records. Working on bytes rather than text is safe because the delimiter,
 * quote, CR and LF are ASCII and never occur inside a multi-byte UTF-8 sequence; it lets each
 * field be checked for invalid UTF-8 on its own, so one bad byte costs one row.
 *
 * Rules: a field is quoted only if it starts with a quote; inside quotes "" is a quote and
 * delimiters/newlines are data; a quote inside an unquoted field is an ordinary character.
 * Records end at LF, CRLF or a lone CR. Empty lines are skipped (they are not records).
 * Text after a closing quote (`"a"b,`) makes the record malformed but scanning goes on, so the
 * next record is found normally.
 */
export class CsvScanner {
  private state = FIELD_START;
  private fields: Buffer[] = [];
  private segments: Buffer[] = []; // pieces of the current field
  private size = 0;
  private oversize = false;
  private error: string | undefined;
  private started = false; // the current record has at least one byte
  private recordLine = 0;
  private prevCR = false;
  /** Physical line of the next byte (1-based). */
  line = 1;

  constructor(
    private readonly delimiter: number,
    private readonly maxBytes: number,
  ) {}

  push(chunk: Buffer): RawRecord[] {
    const out: RawRecord[] = [];
    const d = this.delimiter;
    // A field left open by the previous chunk continues at byte 0.
    let segStart = this.state === UNQUOTED || this.state === QUOTED ? 0 : -1;
    const closeSegment = (end: number) => {
      if (segStart >= 0 && end > segStart) this.addSegment(chunk.subarray(segStart, end));
      segStart = -1;
    };
    for (let i = 0; i < chunk.length; i++) {
      const b = chunk[i];
      const afterCR = this.prevCR;
      this.prevCR = b === CR;
      switch (this.state) {
        case FIELD_START:
          if (b === LF || b === CR) {
            // "a,b," ends with an empty field; a line with nothing on it is skipped.
            if (this.started) out.push(this.endRecord());
          } else {
            if (!this.started) {
              this.started = true;
              this.recordLine = this.line;
            }
            if (b === d) this.endField();
            else if (b === QUOTE) {
              this.state = QUOTED;
              segStart = i + 1;
            } else {
              this.state = UNQUOTED;
              segStart = i;
            }
          }
          break;
        case UNQUOTED:
          if (b === d || b === LF || b === CR) {
            closeSegment(i);
            this.state = FIELD_START;
            if (b === d) this.endField();
            else out.push(this.endRecord());
          }
          break;
        case QUOTED:
          if (b === QUOTE) {
            closeSegment(i);
            this.state = QUOTE_IN_QUOTED;
          }
          break;
        case QUOTE_IN_QUOTED:
          if (b === QUOTE) {
            this.state = QUOTED;
            segStart = i; // keep the second quote of "" as data
          } else if (b === d || b === LF || b === CR) {
            this.state = FIELD_START;
            if (b === d) this.endField();
            else out.push(this.endRecord());
          } else {
            this.error ??= "unexpected character after a closing quote";
            this.state = UNQUOTED;
            segStart = i;
          }
          break;
      }
      if (b === CR || (b === LF && !afterCR)) this.line++;
    }
    // Copied because the open field outlives this chunk.
    if (segStart >= 0 && segStart < chunk.length) this.addSegment(Buffer.from(chunk.subarray(segStart)));
    return out;
  }

  /** The last record when the input does not end with a newline, or an unterminated quoted field. */
  end(): RawRecord[] {
    if (this.state === QUOTED) this.error ??= "unterminated quoted field";
    if (!this.started) return [];
    this.state = FIELD_START;
    return [this.endRecord()];
  }

  private addSegment(part: Buffer): void {
    if (this.oversize) return;
    this.size += part.length;
    if (this.size > this.maxBytes) {
      this.oversize = true;
      this.segments = [];
      this.fields = [];
    } else this.segments.push(part);
  }

  private endField(): void {
    const s = this.segments;
    this.fields.push(s.length === 0 ? EMPTY : s.length === 1 ? s[0] : Buffer.concat(s));
    this.segments = [];
  }

  private endRecord(): RawRecord {
    this.endField();
    const record: RawRecord = { line: this.recordLine, fields: this.fields };
    // The syntax error first: an unterminated quote is usually also what made the record too long.
    if (this.error !== undefined) record.error = this.error;
    else if (this.oversize) record.error = `record longer than ${formatBytes(this.maxBytes)}`;
    this.fields = [];
    this.segments = [];
    this.size = 0;
    this.oversize = false;
    this.error = undefined;
    this.started = false;
    return record;
  }
}
