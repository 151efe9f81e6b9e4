// Properties over random conversations, templates and block lengths: conversations stay whole or are
// cut at turn edges only, and the target mask holds exactly the trained roles' tokens (text and
// closing marker), less each piece's first token.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { charEncoder, conversation, encodeAll, packConversations, template } from "./helpers.js";
import { options } from "../pack/rows.js";
import { longestUncut, turnEdges, turnSpans } from "../../src/chat/layout.js";
import { turnTexts } from "../../src/chat/turns.js";

const ROLES = ["ask", "answer", "note"] as const;
const marker = fc.constantFrom("", "[[<|ask|>]]", "[[<|answer|>]]", "Q: ", "\nA: ", "[[<|endoftext|>]]", "#\n");
const roleMarkers = fc.record({ before: marker, after: marker });
const word = fc.stringMatching(/^[a-z ]{1,12}$/);

const arbitrary = fc.record({
  markers: fc.tuple(roleMarkers, roleMarkers, roleMarkers),
  begin: marker,
  end: marker,
  trainOn: fc.subarray([...ROLES], { minLength: 1 }),
  convs: fc.array(fc.array(fc.tuple(fc.constantFrom(...ROLES), word), { minLength: 1, maxLength: 6 }), { minLength: 1, maxLength: 12 }),
  length: fc.integer({ min: 24, max: 96 }),
  strategy: fc.constantFrom("best-fit", "single"),
});

describe("conversations: packing and target mask properties", () => {
  it("whole or cut at turn edges; targets are exactly the trained tokens less piece starts; decoding them gives the trained texts and closing markers", () => {
    let cut = 0;
    fc.assert(
      fc.property(arbitrary, (a) => {
        const t = template({
          roles: Object.fromEntries(ROLES.map((r, i) => [r, a.markers[i]])),
          begin: a.begin,
          end: a.end,
          train_on: a.trainOn,
        });
        const convs = a.convs.map((c) => conversation(c));
        // Conversations a turn of which does not fit are what the pack phase leaves out (turn-too-long).
        const enc = charEncoder();
        const all = encodeAll(t, convs);
        const fits = convs.filter((_, i) => longestUncut(all[i].layout, all[i].tokens.length) <= a.length);
        const { rows, docs } = packConversations(t, fits, options({ length: a.length, strategy: a.strategy, shuffle: false }));

        // Each conversation's targets as document offsets, gathered from the rows.
        const got = docs.map(() => [] as number[]);
        const starts = docs.map(() => [] as number[]);
        for (const r of rows) {
          let at = 0;
          r.pieces.forEach((p, k) => {
            let end = at;
            while (end < r.segments.length && r.segments[end] === k + 1) end++;
            starts[p.doc].push(p.offset);
            for (let i = at; i < end; i++) {
              expect(r.tokens[i]).toBe(docs[p.doc].tokens[p.offset + i - at]);
              if (r.target[i]) got[p.doc].push(p.offset + i - at);
            }
            at = end;
          });
          for (let i = at; i < r.segments.length; i++) expect(r.target[i]).toBe(0);
        }
        docs.forEach((d, n) => {
          const edges = new Set(turnEdges(d.layout));
          starts[n].sort((x, y) => x - y);
          if (starts[n].length > 1) cut++;
          if (d.tokens.length <= a.length) expect(starts[n]).toEqual([0]);
          for (const s of starts[n]) expect(s === 0 || edges.has(s)).toBe(true);
          const trained: number[] = [];
          for (const s of turnSpans(d.layout)) for (let i = s.learn; i < s.end; i++) if (!starts[n].includes(i)) trained.push(i);
          expect(got[n].sort((x, y) => x - y)).toEqual(trained);
          // Uncut, with markers before every trained turn: the targets decode to the trained texts and closing markers.
          const spans = turnSpans(d.layout);
          if (starts[n].length === 1 && spans.every((s) => s.learn > 0 || s.learn === s.end)) {
            const texts = turnTexts(fits[n]);
            const expected = spans
              .map((s, i) => (s.learn < s.end ? texts[i] + a.markers[ROLES.indexOf(fits[n].turns[i].role as (typeof ROLES)[number])].after.replace(/\[\[(.*?)\]\]/g, "$1") : ""))
              .join("");
            expect(enc.decode(got[n].map((i) => d.tokens[i]))).toBe(expected);
          }
        });
      }),
      { numRuns: 300, seed: 20 },
    );
    // The runs do reach the cutting path.
    expect(cut).toBeGreaterThan(20);
  });
});
