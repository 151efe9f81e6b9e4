// language: CLD3 on sentences of our own per language; meta, counts, keep and min_confidence; options.
import { beforeAll, describe, expect, it } from "vitest";
import languageStage, { identify, LANGUAGE_CODES, languageOptions, loadIdentifier, type LanguageOptions } from "../../src/stages/language.js";
import type { DocRecord, StageContext } from "../../src/types.js";
import type { Issue } from "../../src/pipeline/schema.js";
import type { CldFactory } from "cld3-asm";

// Invented tram-depot sentences, written for this test, three per language.
const SENTENCES: Record<string, string[]> = {
  en: [
    "The rear door of car 4711 would not close after the stop at Harrow Lane, so the driver took the tram back to the depot.",
    "We replaced the worn brake pads on the second bogie and tested the tram on the depot loop before the morning service.",
    "The night shift reports a loud knocking noise from the pantograph whenever the car leaves the yard at low speed.",
  ],
  de: [
    "Die hintere Tür von Wagen 4711 ließ sich nach dem Halt an der Lindenstraße nicht mehr schließen, deshalb fuhr der Fahrer zurück ins Depot.",
    "Wir haben die abgenutzten Bremsbeläge am zweiten Drehgestell ersetzt und die Bahn vor dem Frühdienst auf der Depotschleife geprüft.",
    "Die Nachtschicht meldet ein lautes Klopfen vom Stromabnehmer, sobald der Wagen langsam aus dem Hof fährt.",
  ],
  fr: [
    "La porte arrière de la voiture 4711 ne se fermait plus après l'arrêt, alors le conducteur a ramené le tram au dépôt.",
    "Nous avons remplacé les plaquettes de frein usées du deuxième bogie et essayé le tram sur la boucle du dépôt avant le service du matin.",
    "L'équipe de nuit signale un bruit de cognement fort venant du pantographe chaque fois que la voiture quitte la cour.",
  ],
  es: [
    "La puerta trasera del coche 4711 no se cerraba después de la parada, así que el conductor llevó el tranvía de vuelta a las cocheras.",
    "Cambiamos las pastillas de freno gastadas del segundo bogie y probamos el tranvía en el circuito de las cocheras antes del servicio.",
    "El turno de noche informa de un golpeteo fuerte en el pantógrafo cada vez que el coche sale del patio a poca velocidad.",
  ],
  nl: [
    "De achterdeur van rijtuig 4711 ging na de halte niet meer dicht, dus de bestuurder reed de tram terug naar de remise.",
    "We hebben de versleten remblokken op het tweede draaistel vervangen en de tram voor de ochtenddienst op de remiselus getest.",
    "De nachtploeg meldt een hard kloppend geluid bij de stroomafnemer telkens als het rijtuig langzaam het terrein verlaat.",
  ],
};

let cld: CldFactory;
beforeAll(async () => {
  cld = await loadIdentifier();
});

describe("language identification", () => {
  for (const [lang, sentences] of Object.entries(SENTENCES)) {
    it(`identifies ${lang} sentences with high confidence`, () => {
      const id = cld.create(0, 4096);
      try {
        for (const s of sentences) {
          const r = identify(id, s);
          expect(r.language, s).toBe(lang);
          expect(r.confidence, s).toBeGreaterThan(0.9);
        }
      } finally {
        id.dispose();
      }
    });
  }

  it("labels text without letters as und with confidence 0", () => {
    const id = cld.create(0, 4096);
    try {
      for (const t of ["", "4711 4712 09:40", "=== --- ..."]) expect(identify(id, t)).toEqual({ language: "und", confidence: 0 });
    } finally {
      id.dispose();
    }
  });
});

async function run(options: unknown, texts: string[]) {
  const issues: Issue[] = [];
  const o = languageOptions.check(options, [], issues) as LanguageOptions;
  expect(issues).toEqual([]);
  const counts: Record<string, number> = {};
  const drops: { id: string; reason: string; detail?: Record<string, unknown> }[] = [];
  const quiet = () => {};
  const ctx: StageContext = {
    seed: 0,
    drop: (r, reason, detail) => drops.push({ id: r.id, reason, detail }),
    count: (name, n = 1) => (counts[name] = (counts[name] ?? 0) + n),
    log: { info: quiet, warn: quiet, error: quiet, debug: quiet },
    workDir: "/nonexistent",
    addOutputFile: quiet,
  };
  async function* input(): AsyncGenerator<DocRecord> {
    for (const [i, text] of texts.entries()) yield { id: `N-${i}`, source: "notes", text, meta: { depot: "Quayside" }, origin: { file: "n.csv", line: i + 1 }, seq: i };
  }
  const stage = await languageStage.create(o, { baseDir: "." } as never);
  const kept: DocRecord[] = [];
  for await (const r of stage(input(), ctx)) kept.push(r);
  return { kept, drops, counts };
}

describe("language stage", () => {
  it("stores language and confidence in meta and counts every language seen", async () => {
    const { kept, counts, drops } = await run({}, [SENTENCES.en[0], SENTENCES.de[0], SENTENCES.de[1], "4711"]);
    expect(drops).toEqual([]);
    expect(kept.map((r) => r.meta.language)).toEqual(["en", "de", "de", "und"]);
    expect(kept[0].meta).toMatchObject({ depot: "Quayside", language: "en" });
    expect(kept[0].meta.language_confidence).toBeGreaterThan(0.9);
    expect(counts).toEqual({ "language:en": 1, "language:de": 2, "language:und": 1 });
  });

  it("keeps the listed languages and drops the rest as language:other", async () => {
    const { kept, drops } = await run({ keep: ["en", "de"] }, [SENTENCES.en[1], SENTENCES.fr[0], SENTENCES.de[2], SENTENCES.nl[0]]);
    expect(kept.map((r) => r.id)).toEqual(["N-0", "N-2"]);
    expect(drops.map((d) => [d.id, d.reason, d.detail?.language])).toEqual([
      ["N-1", "language:other", "fr"],
      ["N-3", "language:other", "nl"],
    ]);
  });

  it("drops records below min_confidence as language:uncertain, before the keep list", async () => {
    const { kept, drops } = await run({ keep: ["en"], min_confidence: 0.5 }, [SENTENCES.en[2], "=== 4711 ==="]);
    expect(kept.map((r) => r.id)).toEqual(["N-0"]);
    expect(drops).toEqual([{ id: "N-1", reason: "language:uncertain", detail: { language: "und", confidence: 0, min: 0.5 } }]);
  });
});

describe("language options", () => {
  const messages = (v: unknown) => {
    const issues: Issue[] = [];
    languageOptions.check(v, ["language"], issues);
    return issues.map((i) => `${i.path.join(".")}: ${i.message}`);
  };
  it("fills defaults and accepts a single code", () => {
    const issues: Issue[] = [];
    expect(languageOptions.check({ keep: "en" }, [], issues)).toEqual({ keep: ["en"], min_confidence: 0, sample_bytes: 4096 });
    expect(issues).toEqual([]);
  });
  it("names codes CLD3 does not know, with a close match", () => {
    expect(messages({ keep: ["en", "eng"], min_confidence: 2 })).toEqual([
      'language.keep.1: expected a language code CLD3 knows (e.g. en, de, fr), got "eng" (did you mean "en"?)',
      "language.min_confidence: expected a number from 0 to 1, got number 2",
    ]);
  });
  it("reads CLD3's label set from the package: over 100 languages, und excluded", () => {
    expect(LANGUAGE_CODES.length).toBeGreaterThan(100);
    for (const c of ["en", "de", "fr", "es", "nl", "fil", "zh-Latn"]) expect(LANGUAGE_CODES).toContain(c);
    expect(LANGUAGE_CODES).not.toContain("und");
  });
});
