// Near-duplicate clusters from clusters.jsonl: the distribution of cluster sizes and the largest clusters with an excerpt.
import { createReadStream } from "node:fs";
import { access } from "node:fs/promises";
import { createInterface } from "node:readline";
import { join } from "node:path";
import type { Manifest } from "../output/manifest.js";
import { esc, int, note, table } from "./html.js";
import { columns } from "./columns.js";
import { stagesOf } from "./funnel.js";
import { refKey, type Excerpt, type RecordRef } from "./excerpts.js";

export interface ClusterLine {
  cluster: string;
  size: number;
  basis: string;
  kept: RecordRef;
  members: { source: string; id: string; similarity: number; kept?: boolean }[];
}

export interface ClusterSummary {
  /** Clusters and the records in them. */
  clusters: number;
  records: number;
  /** Cluster size → number of clusters. */
  sizes: Map<number, number>;
  /** The largest clusters, largest first (ties in file order). */
  largest: ClusterLine[];
}

export type ClusterState = { ran: false } | { ran: true; missing: true } | { ran: true; missing: false; summary: ClusterSummary };

/** The ten largest are kept while streaming the file, so a file of any size is read in constant memory. */
export async function readClusters(dir: string, m: Manifest, top = 10): Promise<ClusterState> {
  if (!stagesOf(m).some((s) => s.name === "dedup" && s.options?.method === "minhash")) return { ran: false };
  const path = join(dir, "clusters.jsonl");
  if (!(await access(path).then(() => true, () => false))) return { ran: true, missing: true };
  const summary: ClusterSummary = { clusters: 0, records: 0, sizes: new Map(), largest: [] };
  const lines = createInterface({ input: createReadStream(path), crlfDelay: Infinity });
  for await (const l of lines) {
    if (!l) continue;
    const c = JSON.parse(l) as ClusterLine;
    summary.clusters++;
    summary.records += c.size;
    summary.sizes.set(c.size, (summary.sizes.get(c.size) ?? 0) + 1);
    const worst = summary.largest[summary.largest.length - 1];
    if (summary.largest.length < top || c.size > worst.size) {
      // Insert after the last cluster at least as large: ties stay in file order.
      let i = summary.largest.length;
      while (i > 0 && summary.largest[i - 1].size < c.size) i--;
      summary.largest.splice(i, 0, c);
      if (summary.largest.length > top) summary.largest.pop();
    }
  }
  return { ran: true, missing: false, summary };
}

/** Sizes as chart categories: every size from 2 when the largest is at most 16, else power-of-two ranges. */
export function sizeBuckets(sizes: Map<number, number>): { label: string; lo: number; hi: number; clusters: number }[] {
  const keys = [...sizes.keys()].sort((a, b) => a - b);
  const largest = keys[keys.length - 1] ?? 2;
  if (largest <= 16) return Array.from({ length: largest - 1 }, (_, i) => ({ label: String(i + 2), lo: i + 2, hi: i + 2, clusters: sizes.get(i + 2) ?? 0 }));
  const out: { label: string; lo: number; hi: number; clusters: number }[] = [];
  for (let lo = 2; lo <= keys[keys.length - 1]; lo *= 2) {
    const hi = 2 * lo - 1;
    out.push({ label: `${lo}–${hi}`, lo, hi, clusters: keys.filter((k) => k >= lo && k <= hi).reduce((a, k) => a + sizes.get(k)!, 0) });
  }
  return out;
}

export function clustersSection(m: Manifest, state: ClusterState, texts: Map<string, Excerpt>): string {
  if (!state.ran) return note("No near-duplicate stage ran: the pipeline has no dedup stage with method minhash, so there are no clusters to show.");
  if (state.missing) return note("The pipeline has a near-duplicate stage, but clusters.jsonl is missing from the build directory.");
  const s = state.summary;
  if (s.clusters === 0) return note("The near-duplicate stage ran and found no clusters: no two documents reached its similarity threshold.");
  const stage = stagesOf(m).find((x) => x.name === "dedup" && x.options?.method === "minhash")!;
  const parts: string[] = [];
  const dropped = m.records.by_reason["near-duplicate"] ?? 0;
  parts.push(
    `<p>${int(s.clusters)} clusters hold ${int(s.records)} records whose estimated Jaccard similarity reaches ${esc(String(stage.options.threshold))}. ` +
      (stage.options.action === "mark" ? "They were marked and all kept (action: mark)." : `One record per cluster was kept (keep: ${esc(String(stage.options.keep))}); ${int(dropped)} were dropped as near-duplicates.`) +
      `</p>`,
  );
  const buckets = sizeBuckets(s.sizes);
  parts.push(
    `<figure>${columns({
      title: "Near-duplicate cluster sizes",
      desc: `Number of clusters per cluster size, from ${buckets[0].label} to ${buckets[buckets.length - 1].label} records.`,
      panels: [{ name: `${int(s.clusters)} clusters`, cls: "s3", columns: buckets.map((b) => ({ label: b.label, value: b.clusters, tip: `${int(b.clusters)} clusters of ${b.label} records` })) }],
      xCaption: "records in the cluster",
      unit: "clusters",
    })}<figcaption>How many clusters have each size (clusters.jsonl).</figcaption></figure>`,
  );
  parts.push(
    table({
      caption: `The ${s.largest.length} largest clusters`,
      head: ["#", "records", "kept record", "lowest similarity", "excerpt of the kept record"],
      rows: s.largest.map((c, i) => {
        const e = texts.get(refKey(c.kept));
        const excerpt = !e ? "" : "text" in e ? `<q>${esc(e.text)}</q>` : `<span class="muted">${esc(e.missing)}</span>`;
        const low = Math.min(...c.members.map((x) => x.similarity));
        const others = c.members.filter((x) => !x.kept).map((x) => x.id);
        const with_ = `with ${others.slice(0, 4).join(", ")}${others.length > 4 ? ` and ${others.length - 4} more` : ""}`;
        return [String(i + 1), int(c.size), `<code>${esc(c.kept.source)}/${esc(c.kept.id)}</code><br><span class="small muted">${esc(with_)}</span>`, c.basis === "exact" ? "exact (short text)" : low.toFixed(2), excerpt];
      }),
      numeric: [1, 3],
    }),
  );
  parts.push(`<p class="small">Excerpts are read again from the input files, normalized and redacted as the pipeline does, and shortened.</p>`);
  return parts.join("\n");
}
