// A conversation source's rows: turns mapped to one record, malformed turns quarantined with what is wrong.
import { describe, expect, it } from "vitest";
import { RecordMapper, type SourceSpec } from "../../src/sources/source.js";
import { mapTurnTexts, turnTexts } from "../../src/chat/turns.js";

const spec: SourceSpec = {
  name: "desk",
  files: "desk.jsonl",
  format: "jsonl",
  text: "text",
  meta: [],
  weight: 1,
  turns: { field: "messages", role: "from", text: "value", roles: ["technician", "helpdesk"] },
};
const row = (fields: Record<string, unknown>, line = 1) => new RecordMapper(spec).map({ line, fields } as never, "desk.jsonl");

describe("conversation rows", () => {
  it("maps the turns to text joined by newlines, with each turn's role and length", () => {
    const r = row({ messages: [{ from: "technician", value: "Door fault F210?" }, { from: "helpdesk", value: "Check the limit switch.\nThen retest." }] });
    expect(r).toMatchObject({ kind: "record", text: "Door fault F210?\nCheck the limit switch.\nThen retest.", turns: [{ role: "technician", chars: 16 }, { role: "helpdesk", chars: 36 }] });
    if (r.kind !== "record") throw new Error();
    expect(turnTexts(r)).toEqual(["Door fault F210?", "Check the limit switch.\nThen retest."]);
  });

  it.each([
    [{}, 'field "messages" is missing'],
    [{ messages: "hello" }, 'field "messages" is not a list of turns (got string)'],
    [{ messages: [] }, 'field "messages" is an empty list of turns'],
    [{ messages: ["hi"] }, 'turn 1 of "messages" is not a mapping (got string)'],
    [{ messages: [{ value: "hi" }] }, 'turn 1 of "messages" has no "from"'],
    [{ messages: [{ from: "driver", value: "hi" }] }, 'turn 1 of "messages": unknown role "driver" (the source\'s roles are technician, helpdesk)'],
    [{ messages: [{ from: "technician", value: "hi" }, { from: "helpdesk" }] }, 'turn 2 of "messages" has no "value"'],
    [{ messages: [{ from: "technician", value: "  " }] }, 'turn 1 of "messages" has empty "value"'],
    [{ messages: [{ from: "technician", value: 5 }] }, 'turn 1 of "messages": "value" is not a string (got number)'],
  ])("quarantines %j: %s", (fields, error) => {
    expect(row(fields, 7)).toEqual({ kind: "bad", entry: { source: "desk", file: "desk.jsonl", line: 7, error } });
  });

  it("a text change applies to each turn on its own and keeps the turn lengths exact", () => {
    const r = { text: "  a  \n b ", turns: [{ role: "x", chars: 5 }, { role: "y", chars: 3 }] };
    mapTurnTexts(r, (t) => ({ text: t.trim().toUpperCase() + "!", extra: 0 }));
    expect(r).toEqual({ text: "A!\nB!", turns: [{ role: "x", chars: 2 }, { role: "y", chars: 2 }] });
  });
});
