// The byte <-> character map of byte-level BPE tokenizer files: every byte is one printable character.
//
// Tokenizer JSON files store byte-level tokens as strings in which each byte is shown as one
// character: the printable bytes 0x21-0x7E, 0xA1-0xAC and 0xAE-0xFF stand for themselves and the
// other 68 bytes (controls, space, 0x7F-0xA0, 0xAD) become U+0100, U+0101, ... in byte order, so
// the space 0x20 is "Ġ" (U+0120) and the newline 0x0A is "Ċ" (U+010A). (The rule is the one of the
// GPT-2 release, written from memory; tests/tokenizer/byte-level.test.ts checks "Ġ" and "Ċ".)

function printable(b: number): boolean {
  return (b >= 0x21 && b <= 0x7e) || (b >= 0xa1 && b <= 0xac) || (b >= 0xae && b <= 0xff);
}

/** BYTE_TO_CHAR[b] is the character standing for byte b. */
export const BYTE_TO_CHAR: readonly string[] = (() => {
  const out: string[] = new Array<string>(256);
  let next = 0;
  for (let b = 0; b < 256; b++) out[b] = String.fromCharCode(printable(b) ? b : 256 + next++);
  return out;
})();

const CHAR_TO_BYTE = new Map<string, number>(BYTE_TO_CHAR.map((c, b) => [c, b]));

/** The file form of raw bytes (one character per byte). */
export function bytesToToken(bytes: ArrayLike<number>): string {
  let s = "";
  for (let k = 0; k < bytes.length; k++) s += BYTE_TO_CHAR[bytes[k]];
  return s;
}

/** The raw bytes of a file-form token, or undefined when a character is not in the map. */
export function tokenToBytes(token: string): Uint8Array | undefined {
  const out = new Uint8Array(token.length);
  for (let k = 0; k < token.length; k++) {
    const b = CHAR_TO_BYTE.get(token[k]);
    if (b === undefined) return undefined;
    out[k] = b;
  }
  return out;
}
