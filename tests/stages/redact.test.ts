// redact: tables of what each kind must and must not replace, Luhn, word boundaries, counts and options.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import redactStage, { luhnValid, redactOptions, redactText, type RedactKind } from "../../src/stages/redact.js";
import type { DocRecord, StageContext } from "../../src/types.js";
import type { Issue } from "../../src/pipeline/schema.js";

// All addresses, numbers and names are invented; ".example" is reserved for documentation (RFC 2606).
// Card numbers were made for these tests: invented digits with the Luhn check digit appended
// (computed outside siftpack), and the same numbers with the last digit changed for failures.
const TABLES: Record<RedactKind, { positive: string[]; negative: string[] }> = {
  email: {
    positive: [
      "ops@harrow-depot.example",
      "j.smith+rota@depot.example.org",
      "Fitter_7@Quayside.EXAMPLE",
      "stores%north@millbrook.example",
      "x@saltings.example.co.uk",
    ],
    negative: [
      "user@localhost", // no top-level domain
      "a@b.c", // one-letter top-level domain
      "icon@2x.png", // an image name
      "john..smith@depot.example", // doubled dot
      "@depot_ops", // a handle
      "ops@@depot.example", // two @
      "ops@depot..example", // empty label
      "ops@-depot.example", // label starting with a hyphen
      "10@20.30", // numbers
      "ops at depot dot example", // spelled out (not caught: a known gap)
    ],
  },
  phone: {
    positive: [
      "+44 20 7946 0123",
      "+49 30 12345678",
      "+49 (0)30 1234567",
      "+1 (555) 234-5678",
      "+33 1 23 45 67 89",
      "030 1234 5678",
      "0171-5550123",
      "030/1234567",
      "(030) 1234567",
      "555-234-5678",
      "(555) 234-5678",
      "555.234.5678",
    ],
    negative: [
      "2025-03-14", // date
      "14.03.2025", // date
      "14/03/2025", // date
      "0900-1700", // opening hours, 8 digits
      "T-2025-0140", // ticket id
      "4711 4712 4713", // car numbers
      "123456789", // bare digit run
      "1,250.00", // amount
      "+49 30", // too short
      "123-456-7890", // area code cannot start with 1
      "555-0123", // 7-digit local number: not told apart from codes
      "12:30", // time
      "+12345678901234567", // longer than E.164 allows
    ],
  },
  ip: {
    positive: ["192.168.10.24", "10.0.0.1", "255.255.255.255", "2001:db8::1", "fe80::1ff:fe23:4567:890a", "2001:0db8:85a3:0000:0000:8a2e:0370:7334", "::ffff:192.0.2.1"],
    negative: [
      "256.1.1.1", // octet out of range
      "1.2.3", // three parts
      "1.2.3.4.5", // version string
      "01.02.03.04", // leading zeros
      "12:30:45", // clock time
      "00:1a:2b:3c:4d:5e", // MAC address
      "::1", // loopback, not personal
      "std::vector", // code
    ],
  },
  card: {
    positive: [
      "4700 1234 5678 9010",
      "4700-1234-5678-9010",
      "4700123456789010",
      "5278 123498 76542", // 4-6-5
      "3712 345678 9012", // 4-6-4
      "4712 3456 7890 1234 560", // 19 digits
      "4222000048401", // 13 digits
    ],
    negative: [
      "4700 1234 5678 9011", // fails Luhn
      "4700123456789011", // fails Luhn
      "5278 123498 76543", // fails Luhn
      "4222000048402", // fails Luhn
      "4700 1234-5678 9010", // mixed separators
      "1234 5678 9012", // 12 digits
      "47001234567890101234", // 20 digits
      "4700123456789010-2", // part of a longer code
    ],
  },
};

const PLACEHOLDER: Record<RedactKind, string> = { email: "<EMAIL>", phone: "<PHONE>", ip: "<IP>", card: "<CARD>" };
const ALL: RedactKind[] = ["email", "phone", "ip", "card"];

describe("redaction tables", () => {
  for (const kind of ALL) {
    describe(kind, () => {
      it.each(TABLES[kind].positive)(`replaces %s`, (value) => {
        const { text, counts } = redactText(`Contact ${value} today.`, ALL);
        expect(text).toBe(`Contact ${PLACEHOLDER[kind]} today.`);
        expect(counts[kind]).toBe(1);
      });
      it.each(TABLES[kind].negative)(`leaves %s`, (value) => {
        const input = `Contact ${value} today.`;
        expect(redactText(input, ALL).text).toBe(input);
      });
    });
  }

  it("takes a sentence's closing punctuation and brackets as boundaries", () => {
    expect(redactText("Write to <ops@depot.example>, or gate@saltings.example.", ALL).text).toBe("Write to <<EMAIL>>, or <EMAIL>.");
    expect(redactText("(mailto:stores@millbrook.example)", ALL).text).toBe("(mailto:<EMAIL>)");
    expect(redactText("from 2001:db8::7: timeout", ALL).text).toBe("from <IP>: timeout");
  });

  it("only replaces the kinds asked for", () => {
    const input = "ops@depot.example 030 1234 5678 10.0.0.1 4700123456789010";
    expect(redactText(input, ["ip"]).text).toBe("ops@depot.example 030 1234 5678 <IP> 4700123456789010");
    expect(redactText(input, ["card", "email"]).text).toBe("<EMAIL> 030 1234 5678 10.0.0.1 <CARD>");
  });
});

describe("Luhn check", () => {
  it("accepts numbers with a correct check digit and rejects every single-digit change of one", () => {
    for (const good of ["4700123456789010", "527812349876542", "37123456789012", "4222000048401", "79927398713"]) {
      expect(luhnValid(good)).toBe(true);
      for (let i = 0; i < good.length; i++) {
        for (let d = 0; d <= 9; d++) {
          if (String(d) === good[i]) continue;
          const changed = good.slice(0, i) + d + good.slice(i + 1);
          expect(luhnValid(changed)).toBe(false);
        }
      }
    }
    expect(luhnValid("")).toBe(false);
  });
});

describe("placeholders never merge words", () => {
  const pieces = [
    "tram",
    "depot",
    "Straße",
    "4711",
    "ops@harrow-depot.example",
    "030 1234 5678",
    "192.168.10.24",
    "4700 1234 5678 9010",
    "+44 20 7946 0123",
    "fe80::1ff:fe23:4567:890a",
  ];
  const separators = ["", " ", ", ", "\n", ":", "(", ")", "-", ".", "/", "_", "é", "🚋"];
  it("a placeholder never touches a letter or digit, however the pieces are glued together", () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(fc.constantFrom(...pieces), fc.constantFrom(...separators)), { maxLength: 12 }), (parts) => {
        const input = parts.map(([p, s]) => p + s).join("");
        const out = redactText(input, ALL).text;
        for (const m of out.matchAll(/<(EMAIL|PHONE|IP|CARD)>/g)) {
          const before = out.slice(0, m.index);
          const after = out.slice(m.index + m[0].length);
          expect(before).not.toMatch(/[\p{L}\p{N}]$/u);
          expect(after).not.toMatch(/^[\p{L}\p{N}]/u);
        }
      }),
    );
  });
  it("separated words stay separated", () => {
    expect(redactText("Call 030 1234 5678 now", ALL).text).toBe("Call <PHONE> now");
    expect(redactText("car 4711\n10.0.0.1\nok", ALL).text).toBe("car 4711\n<IP>\nok");
  });
});

describe("redact stage", () => {
  it("counts replacements per kind in stage_counts, zero included", async () => {
    const counts: Record<string, number> = {};
    const quiet = () => {};
    const ctx: StageContext = {
      seed: 0,
      drop: quiet,
      count: (name, n = 1) => (counts[name] = (counts[name] ?? 0) + n),
      log: { info: quiet, warn: quiet, error: quiet, debug: quiet },
      workDir: "/nonexistent",
      addOutputFile: quiet,
    };
    const texts = ["Mail ops@depot.example or gate@saltings.example.", "Call 030 1234 5678.", "Nothing here."];
    async function* input(): AsyncGenerator<DocRecord> {
      for (const [i, text] of texts.entries()) yield { id: `${i}`, source: "notes", text, meta: {}, origin: { file: "n.csv", line: i + 1 }, seq: i };
    }
    const stage = await redactStage.create({ kinds: ["email", "phone", "card"] }, { baseDir: "." } as never);
    const out: string[] = [];
    for await (const r of stage(input(), ctx)) out.push(r.text);
    expect(out).toEqual(["Mail <EMAIL> or <EMAIL>.", "Call <PHONE>.", "Nothing here."]);
    expect(counts).toEqual({ "redact:email": 2, "redact:phone": 1, "redact:card": 0 });
  });
});

describe("redact options", () => {
  const check = (v: unknown) => {
    const issues: Issue[] = [];
    const { kinds } = redactOptions.check(v, ["redact"], issues);
    return { kinds, messages: issues.map((i) => `${i.path.join(".")}: ${i.message}`) };
  };
  it("takes a list, a single kind, or nothing for all kinds, and resolves to { kinds }", () => {
    expect(check(["email", "card", "email"]).kinds).toEqual(["email", "card"]);
    expect(check("ip").kinds).toEqual(["ip"]);
    expect(check({}).kinds).toEqual(["email", "phone", "ip", "card"]);
    expect(check(null).kinds).toEqual(["email", "phone", "ip", "card"]);
    expect(check({ kinds: ["phone"] })).toEqual({ kinds: ["phone"], messages: [] });
    expect(check({ kind: ["phone"] }).messages).toEqual(['redact.kind: unknown key "kind"; allowed: kinds (or give the list of kinds directly)']);
  });
  it("names an unknown kind with a close match", () => {
    expect(check(["email", "phnoe"]).messages).toEqual(['redact.1: expected one of email | phone | ip | card, got "phnoe" (did you mean "phone"?)']);
    expect(check([]).messages).toEqual(["redact: expected a non-empty list of email | phone | ip | card"]);
  });
});
