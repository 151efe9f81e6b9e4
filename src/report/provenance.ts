// What the build was made from: build hash, tool and tokenizer, the input files with their fingerprints, and the pipeline as resolved.
import { stringify } from "yaml";
import type { Manifest } from "../output/manifest.js";
import { bytes, esc, fig, int, table } from "./html.js";

/** Output files listed in full up to this many; a build with thousands of shards lists the first ones. */
const FILES_SHOWN = 60;

export function provenanceSection(m: Manifest): string {
  const parts: string[] = [];
  const deps = Object.entries(m.tool.dependencies ?? {}).map(([k, v]) => `${esc(k)} ${esc(v)}`).join(", ");
  parts.push(
    `<dl class="facts">` +
      `<dt>build hash</dt><dd><code>${fig(["build_hash"], m.build_hash)}</code> (XXH64 over the list of output files and their checksums)</dd>` +
      `<dt>pipeline</dt><dd><code>${fig(["pipeline", "file"], m.pipeline.file)}</code>, hash <code>${fig(["pipeline", "hash"], m.pipeline.hash)}</code>, seed ${fig(["seed"], m.seed)}</dd>` +
      `<dt>tool</dt><dd>${esc(m.tool.name)} ${fig(["tool", "version"], m.tool.version)}${deps ? ` (${deps})` : ""}</dd>` +
      `<dt>tokenizer</dt><dd><code>${fig(["tokenizer", "name"], m.tokenizer.name)}</code>, ${fig(["tokenizer", "vocab_size"], m.tokenizer.vocab_size)} ids, end-of-text id ${fig(["tokenizer", "eos_id"], m.tokenizer.eos_id)}, padding id ${fig(["tokenizer", "pad_id"], m.tokenizer.pad_id)}</dd>` +
      `<dt>blocks</dt><dd>${fig(["length"], m.length)} tokens, <code>${fig(["dtype"], m.dtype)}</code> token ids, <code>${fig(["segments_dtype"], m.segments_dtype)}</code> segment ids</dd>` +
      `</dl>`,
  );
  const total = m.inputs.reduce((a, i) => a + i.size, 0);
  parts.push(
    table({
      caption: `Input files (${int(m.inputs.length)}, ${bytes(total)}), paths relative to the pipeline file`,
      head: ["source", "file", "bytes", "XXH64"],
      rows: m.inputs.map((x, i) => [esc(x.source), `<code>${esc(x.path)}</code>`, fig(["inputs", i, "size"], x.size), `<code>${fig(["inputs", i, "xxh64"], x.xxh64)}</code>`]),
      numeric: [2],
    }),
  );
  const files = m.files ?? [];
  parts.push(
    table({
      caption: files.length > FILES_SHOWN ? `Output files (the first ${FILES_SHOWN} of ${int(files.length)})` : `Output files (${int(files.length)})`,
      head: ["file", "bytes", "XXH64"],
      rows: files.slice(0, FILES_SHOWN).map((f, i) => [`<code>${esc(f.path)}</code>`, fig(["files", i, "size"], f.size), `<code>${fig(["files", i, "xxh64"], f.xxh64)}</code>`]),
      numeric: [1],
    }),
  );
  parts.push(
    `<h3 id="resolved-h">The pipeline as resolved (defaults filled in)</h3>\n` +
      `<pre class="yaml" tabindex="0" role="region" aria-labelledby="resolved-h">${esc(stringify(m.pipeline.resolved))}</pre>`,
  );
  return parts.join("\n");
}
