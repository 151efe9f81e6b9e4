// Builds the report for a build directory: reads the manifest and the files beside it, renders every section.
import { readFile } from "node:fs/promises";
import { join } from "node:path";
import { readManifest } from "../output/manifest.js";
import { statsFigures } from "./figures.js";
import { funnelSection } from "./funnel-section.js";
import { splitsSection } from "./splits.js";
import { mixtureSection } from "./mixture.js";
import { lengthsSection } from "./lengths.js";
import { clustersSection, readClusters } from "./clusters.js";
import { configuredFields, excerpts, withoutInputText, type Excerpt } from "./excerpts.js";
import { packingSection, pickMaskRow } from "./packing.js";
import { conversationsSection } from "./conversations.js";
import { overlapSection } from "./overlap.js";
import { decontaminationSection } from "./decontamination.js";
import { provenanceSection } from "./provenance.js";
import { page } from "./page.js";
import { resetIds } from "./svg.js";

export interface ReportOptions {
  /** Read the inputs again for cluster excerpts, and quote unreadable records' errors whole (default true); false keeps all input text out. */
  excerpts?: boolean;
  /** Longest time spent reading inputs for excerpts, in ms (default 15 s). */
  excerptMs?: number;
}

/** Quarantine lines shown in the report. */
const QUARANTINE_SHOWN = 10;

/** The first quarantine lines; `clean` rewrites their errors (without excerpts, it removes what they quote). */
async function quarantineHead(dir: string, clean: (error: string) => string = (e) => e): Promise<{ file: string; line: number; error: string }[]> {
  const text = await readFile(join(dir, "quarantine.jsonl"), "utf8").catch(() => "");
  const out = [];
  for (const l of text.split("\n")) {
    if (out.length === QUARANTINE_SHOWN) break;
    if (!l) continue;
    const q = JSON.parse(l) as { file: string; line: number; error: string };
    out.push({ file: q.file, line: q.line, error: clean(String(q.error)) });
  }
  return out;
}

/** The report of the build in `dir` as one HTML document (`label` is how the page names the directory). */
export async function buildReport(dir: string, label = dir, o: ReportOptions = {}): Promise<string> {
  resetIds();
  const m = await readManifest(dir);
  const figures = statsFigures(m);
  const clusters = await readClusters(dir, m);
  let texts = new Map<string, Excerpt>();
  if (clusters.ran && !clusters.missing && o.excerpts !== false) {
    texts = await excerpts(dir, m, clusters.summary.largest.map((c) => c.kept), { max: 180, deadline: Date.now() + (o.excerptMs ?? 15_000) });
  }
  const mask = await pickMaskRow(dir, m);
  const conversations = conversationsSection(m);
  const fields = configuredFields(m);
  const quarantine = await quarantineHead(dir, o.excerpts === false ? (e) => withoutInputText(e, fields) : undefined);
  return page({
    dir: label,
    manifest: m,
    figures,
    sections: [
      { id: "records", title: "Records from input to splits", nav: "Records", html: funnelSection(m, quarantine) },
      { id: "splits", title: "Documents and tokens per split and source", nav: "Splits and sources", html: splitsSection(m, figures) },
      { id: "mixture", title: "Mixture of the train split: shares and epochs", nav: "Mixture", html: mixtureSection(m) },
      { id: "lengths", title: "Document lengths", nav: "Lengths", html: lengthsSection(m) },
      { id: "clusters", title: "Near-duplicate clusters", nav: "Near-duplicates", html: clustersSection(m, clusters, texts) },
      { id: "packing", title: "Packing: padding and cuts", nav: "Packing", html: packingSection(m, mask) },
      // Only for a build with conversations: other reports keep their sections.
      ...(conversations ? [{ id: "conversations", title: "Conversations: turns, roles and trained tokens", nav: "Conversations", html: conversations }] : []),
      { id: "overlap", title: "Overlap between splits", nav: "Overlap", html: overlapSection(m) },
      { id: "decontamination", title: "Decontamination against protected texts", nav: "Decontamination", html: decontaminationSection(m, o.excerpts !== false) },
      { id: "provenance", title: "Inputs, pipeline and build", nav: "Provenance", html: provenanceSection(m) },
    ],
  });
}
