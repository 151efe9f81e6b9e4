// Tokenization with a per-input-file cache: ids depend only on a record's text, and the text
// reaching the tokenizer is fixed by the file's read unit, so the unit's key plus the tokenizer
// settings identify the ids. Records of one file arrive together and in order, so the cache is
// read and written sequentially.
import { rm } from "node:fs/promises";
import { BuildCache } from "../cache/build-cache.js";
import { TokenStoreReader, TokenStoreWriter } from "../cache/token-store.js";
import { unitId } from "./read-units.js";
import { tokenizeText, type TokenizeOptions } from "../stages/tokenize.js";
import { loadEncoding, TokenBuffer } from "../tokenizer/index.js";
import { toolVersion } from "../output/manifest.js";
import type { Stage } from "../stages/stage.js";
import type { DocRecord } from "../types.js";

interface Unit {
  id: string;
  reader?: TokenStoreReader;
  writer: TokenStoreWriter;
  commit: () => Promise<void>;
  tmp: string;
}

export function cachedTokenize(o: TokenizeOptions, cache: BuildCache, unitKeys: Map<string, string>): Stage {
  const enc = loadEncoding(o.encoding);
  const buf = new TokenBuffer(1 << 16);
  return async function* tokenize(input, ctx) {
    let unit: Unit | undefined;
    const close = async (u: Unit | undefined, complete: boolean) => {
      if (!u) return;
      u.reader?.close();
      u.writer.close();
      if (complete) await u.commit();
      else await rm(u.tmp, { force: true });
    };
    const open = async (r: DocRecord): Promise<Unit> => {
      const id = unitId(r.source, r.origin.file);
      const readKey = unitKeys.get(id);
      const key = BuildCache.key({ unit: "tokens", siftpack: toolVersion(), read: readKey, tokenize: o });
      const hit = await cache.lookup("tokens", key, ".bin");
      if (hit) cache.report.tokens.reused++;
      else cache.report.tokens.computed++;
      const out = cache.pending("tokens", key, ".bin");
      return { id, reader: hit ? new TokenStoreReader(hit) : undefined, writer: new TokenStoreWriter(out.tmp), commit: out.commit, tmp: out.tmp };
    };
    let complete = false;
    try {
      for await (const r of input) {
        const id = unitId(r.source, r.origin.file);
        if (unit?.id !== id) {
          await close(unit, true);
          unit = await open(r);
        }
        let tokens = unit.reader?.find(r.origin.line);
        if (tokens) cache.report.tokens.records_reused++;
        else {
          tokens = tokenizeText(enc, r.text, o, buf);
          cache.report.tokens.records_computed++;
        }
        unit.writer.add(r.origin.line, tokens);
        r.tokens = tokens;
        if (tokens.length === 0) ctx.drop(r, "no-tokens");
        else yield r;
      }
      complete = true;
    } finally {
      await close(unit, complete);
    }
  };
}
