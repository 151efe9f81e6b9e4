// The pipeline file's rules for conversations, reported at file:line:col like every key problem.
import { describe, expect, it } from "vitest";
import { checkPipelineText } from "../../src/pipeline/load.js";

function problems(source: string, tokenize: string, pack = "{ length: 64, strategy: best-fit }"): string[] {
  const text = `siftpack: 1
sources:
  - name: desk
    files: desk.jsonl
    format: jsonl
${source}
stages:
  - tokenize: ${tokenize}
  - pack: ${pack}
output: { dir: out }
`;
  const { issues, describe: where } = checkPipelineText(text, "p.yaml");
  return issues.map(where);
}

const TURNS = "    turns: { field: messages, role: from, text: value, roles: [technician, helpdesk] }";
const TEMPLATE = '{ template: { roles: { technician: { before: "Q: " }, helpdesk: { before: "A: ", after: "[[<|endoftext|>]]" } }, train_on: [helpdesk] } }';

describe("conversation rules", () => {
  it("a well-formed conversation pipeline has no problems", () => {
    expect(problems(TURNS, TEMPLATE)).toEqual([]);
  });

  it("a source with turns needs a template", () => {
    expect(problems(TURNS, "{ encoding: gpt2 }")).toEqual(['p.yaml:8:5: stages[0].tokenize: source "desk" has turns: tokenize needs a template saying how to render them']);
  });

  it("every role of the source has markers; train_on names roles of the template", () => {
    const t = '{ template: { roles: { technician: {} }, train_on: [helpdsk] } }';
    expect(problems(TURNS, t)).toEqual([
      'p.yaml:8:67: stages[0].tokenize.template.train_on[0]: "helpdsk" is not a role of the template (its roles are technician)',
      'p.yaml:6:76: sources[0].turns.roles[1]: role "helpdesk" has no markers in the tokenize template (its roles are technician)',
    ]);
  });

  it("[[ and ]] only wrap a special token's name", () => {
    const t = '{ template: { roles: { technician: { before: "[[x" }, helpdesk: { after: "[[]]" } }, train_on: [helpdesk] } }';
    expect(problems(TURNS, t)).toEqual([
      'p.yaml:8:60: stages[0].tokenize.template.roles.technician.before: "[[x": "[[" and "]]" only wrap a special token\'s name, as in [[<|endoftext|>]]',
      'p.yaml:8:88: stages[0].tokenize.template.roles.helpdesk.after: "[[]]" names no special token',
    ]);
  });

  it("concat cuts inside turns, so it needs long_conversations: anywhere", () => {
    expect(problems(TURNS, TEMPLATE, "{ length: 64, strategy: concat }")).toEqual([
      "p.yaml:9:35: stages[1].pack.strategy: concat cuts documents at every block edge, inside turns: conversations need best-fit or single (or long_conversations: anywhere to accept cuts inside turns)",
    ]);
    expect(problems(TURNS, TEMPLATE, "{ length: 64, strategy: concat, long_conversations: anywhere }")).toEqual([]);
  });

  it("turns need a format whose fields hold lists", () => {
    const text = `siftpack: 1
sources:
  - { name: desk, files: desk.csv, format: csv, turns: { field: m, roles: [a] } }
stages:
  - tokenize: { template: { roles: { a: {} }, train_on: [a] } }
  - pack: { strategy: best-fit }
output: { dir: out }
`;
    const { issues, describe: where } = checkPipelineText(text, "p.yaml");
    expect(issues.map(where)).toEqual(["p.yaml:3:49: sources[0].turns: turns apply to formats jsonl, json, parquet (a csv field cannot hold a list)"]);
  });
});
