// The conversation template of the tokenize stage: for each role the text before and after its
// turns, the text where a conversation begins and ends, and the roles trained on. A marker is plain
// text in which [[name]] stands for the tokenizer's special token `name` (checked against the
// tokenizer: an unknown name is a pipeline error). Nothing else is interpreted: no variables, no
// conditions, no loops.
import { field, list, obj, refine, str, type Infer, type Issue, type Path, type Schema } from "../pipeline/schema.js";
import type { Encoder, TokenBuffer } from "../tokenizer/index.js";
import type { Turn } from "../types.js";
import { SiftpackError } from "../errors.js";
import { turnTexts } from "./turns.js";
import { makeLayout } from "./layout.js";

const roleMarkers = obj({
  before: field(str(), { default: "" }),
  after: field(str(), { default: "" }),
});

/** A mapping of role names to their markers, in the order written (the role index of layouts). */
const rolesSchema: Schema<Record<string, Infer<typeof roleMarkers>>> = {
  describe: "a mapping of role names to { before, after }",
  check(v, path, issues) {
    if (v === null || typeof v !== "object" || Array.isArray(v) || Object.keys(v).length === 0) {
      issues.push({ path, message: `expected ${this.describe} (at least one role)` });
      return {};
    }
    const out: Record<string, Infer<typeof roleMarkers>> = {};
    for (const [k, x] of Object.entries(v as Record<string, unknown>)) out[k] = roleMarkers.check(x ?? {}, [...path, k], issues);
    return out;
  },
};

export const templateSchema = refine(
  obj({
    roles: field(rolesSchema, { required: true }),
    begin: field(str(), { default: "" }),
    end: field(str(), { default: "" }),
    train_on: field(list(str({ nonEmpty: true }), { nonEmpty: true, orSingle: true }), { required: true }),
  }),
  (t, path, issues) => {
    const roles = Object.keys(t.roles ?? {});
    (t.train_on ?? []).forEach((r, i) => {
      if (typeof r === "string" && r !== "" && !roles.includes(r)) issues.push({ path: [...path, "train_on", i], message: `"${r}" is not a role of the template (its roles are ${roles.join(", ")})` });
    });
    for (const [where, text] of markerTexts(t)) for (const m of markerProblems(text)) issues.push({ path: [...path, ...where], message: m });
  },
);
export type ChatTemplate = Infer<typeof templateSchema>;

/** A marker's parts: plain text, or the name of a special token. */
export type MarkerPart = { text: string } | { special: string };

const SPECIAL = /\[\[(.*?)\]\]/g;

/** Splits a marker into plain text and special-token names. */
export function markerParts(marker: string): MarkerPart[] {
  const out: MarkerPart[] = [];
  let at = 0;
  for (const m of marker.matchAll(SPECIAL)) {
    if (m.index > at) out.push({ text: marker.slice(at, m.index) });
    out.push({ special: m[1] });
    at = m.index + m[0].length;
  }
  if (at < marker.length) out.push({ text: marker.slice(at) });
  return out;
}

function markerProblems(marker: string): string[] {
  const out: string[] = [];
  if (typeof marker !== "string") return out;
  for (const p of markerParts(marker)) {
    if ("special" in p && p.special === "") out.push(`"[[]]" names no special token`);
    if ("text" in p && (p.text.includes("[[") || p.text.includes("]]"))) out.push(`${JSON.stringify(p.text)}: "[[" and "]]" only wrap a special token's name, as in [[<|endoftext|>]]`);
  }
  return out;
}

/** Every marker of a template with its path below the template. */
function markerTexts(t: ChatTemplate): [Path, string][] {
  const out: [Path, string][] = [];
  if (typeof t.begin === "string") out.push([["begin"], t.begin]);
  for (const [role, m] of Object.entries(t.roles ?? {})) {
    if (typeof m?.before === "string") out.push([["roles", role, "before"], m.before]);
    if (typeof m?.after === "string") out.push([["roles", role, "after"], m.after]);
  }
  if (typeof t.end === "string") out.push([["end"], t.end]);
  return out;
}

/** Issues for special-token names the tokenizer does not have (`specials`: its special token strings). */
export function unknownSpecials(t: ChatTemplate, specials: readonly string[], path: Path): Issue[] {
  const issues: Issue[] = [];
  for (const [where, text] of markerTexts(t)) {
    for (const p of markerParts(text)) {
      if ("special" in p && p.special !== "" && !specials.includes(p.special))
        issues.push({ path: [...path, ...where], message: `[[${p.special}]] is not a special token of the tokenizer (it has ${specials.join(", ")})` });
    }
  }
  return issues;
}

/**
 * The template shown for people (`siftpack plan`): one turn of each role in the order written, its
 * text as `<role text>`, special tokens by name, the trained part between ⟦ and ⟧ (as `inspect` marks it).
 */
export function templateExample(t: ChatTemplate): string {
  const show = (m: string) => markerParts(m).map((p) => ("text" in p ? p.text : p.special)).join("");
  let out = show(t.begin);
  for (const [role, m] of Object.entries(t.roles)) {
    const body = `<${role} text>${show(m.after)}`;
    out += show(m.before) + (t.train_on.includes(role) ? `⟦${body}⟧` : body);
  }
  return out + show(t.end);
}

/** Appends a marker's ids: plain parts encoded as ordinary text, [[name]] as the special token's id. */
function encodeMarker(enc: Encoder, parts: readonly MarkerPart[], out: TokenBuffer): void {
  for (const p of parts) {
    if ("text" in p) enc.encodeInto(p.text, out);
    else {
      const id = enc.specialTokens[p.special];
      if (id === undefined) throw new Error(`template: [[${p.special}]] is not a special token of ${enc.name}`);
      out.push(id);
    }
  }
}

/** A template made ready for encoding: markers split once, roles numbered. */
export class CompiledTemplate {
  readonly roles: string[];
  private readonly before: MarkerPart[][];
  private readonly after: MarkerPart[][];
  private readonly trained: boolean[];
  private readonly begin: MarkerPart[];
  private readonly end: MarkerPart[];

  constructor(t: ChatTemplate) {
    this.roles = Object.keys(t.roles);
    this.before = this.roles.map((r) => markerParts(t.roles[r].before));
    this.after = this.roles.map((r) => markerParts(t.roles[r].after));
    this.trained = this.roles.map((r) => t.train_on.includes(r));
    this.begin = markerParts(t.begin);
    this.end = markerParts(t.end);
  }

  /**
   * A conversation's ids and layout: [BOS] begin, per turn (before, text, after), end [EOS]. Each
   * marker and each turn's text is encoded on its own, so every turn edge and the start of every
   * target range is a token edge (encoding the rendered string whole could merge a marker's last
   * byte with a turn's first).
   */
  encode(enc: Encoder, r: { text: string; turns?: Turn[] }, bos: boolean, eos: boolean, buf: TokenBuffer): { tokens: Uint32Array; layout: Uint32Array } {
    buf.clear();
    if (bos) buf.push(enc.eosId);
    encodeMarker(enc, this.begin, buf);
    const first = buf.length;
    const turnsLength = r.turns!.reduce((a, t) => a + t.chars, 0) + r.turns!.length - 1;
    if (turnsLength !== r.text.length)
      throw new SiftpackError("SP_STAGE", `a conversation's text (${r.text.length} characters) no longer matches its turns (${turnsLength}): a stage changed its text without its turns (change each turn with mapTurnTexts)`);
    const texts = turnTexts(r);
    const spans: { role: number; learn: number; end: number }[] = [];
    r.turns!.forEach((turn, i) => {
      const role = this.roles.indexOf(turn.role);
      if (role < 0) throw new Error(`template: role "${turn.role}" has no markers`);
      encodeMarker(enc, this.before[role], buf);
      const learn = buf.length;
      enc.encodeInto(texts[i], buf);
      encodeMarker(enc, this.after[role], buf);
      spans.push({ role, learn: this.trained[role] ? learn : buf.length, end: buf.length });
    });
    encodeMarker(enc, this.end, buf);
    if (eos) buf.push(enc.eosId);
    return { tokens: buf.toArray(), layout: makeLayout(first, spans) };
  }

  /** The rendered text of a conversation (what the ids decode to), for people: README, inspect. */
  render(enc: Pick<Encoder, "specialTokens">, r: { text: string; turns?: Turn[] }): string {
    const show = (parts: MarkerPart[]) => parts.map((p) => ("text" in p ? p.text : p.special)).join("");
    const texts = turnTexts(r);
    let out = show(this.begin);
    r.turns!.forEach((turn, i) => {
      const role = this.roles.indexOf(turn.role);
      out += show(this.before[role]) + texts[i] + show(this.after[role]);
    });
    return out + show(this.end);
  }
}
