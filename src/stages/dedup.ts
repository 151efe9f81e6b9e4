// dedup: removes exact duplicates (XXH64 of the text, keeping the first) or near-duplicates (MinHash + LSH), as keyed steps.
import { availableParallelism } from "node:os";
import { defineStage } from "./stage.js";
import { keyedStage } from "./keyed.js";
import { dedupOptions, type DedupOptions} from "../dedup/options.js";
import { exactForm } from "../dedup/exact.js";
import { minhashForm } from "../dedup/minhash.js";
import { explainBands } from "../dedup/lsh-params.js";
import type { KeyedForm } from "./keyed.js";

export { dedupOptions, type DedupOptions, type MinhashOptions } from "../dedup/options.js";

const formFor = (o: DedupOptions) => (o.method === "minhash" ? minhashForm : exactForm) as KeyedForm<DedupOptions>;

export default defineStage<DedupOptions>({
  name: "dedup",
  summary: "removes duplicate documents: exact (same text, keeps the first) or minhash (near-duplicates: signatures, band buckets, clusters)",
  options: dedupOptions,
  form: formFor,
  create(o, env) {
    // The form's own `workers` option (MinHash signing) takes precedence over these threads.
    return keyedStage(formFor(o), o, env?.workers ?? availableParallelism());
  },
  explain(o) {
    return o.method === "minhash" ? explainBands(o) : {};
  },
});
