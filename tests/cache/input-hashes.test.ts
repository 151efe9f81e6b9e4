// The input hashes kept under a file's identity (src/cache/input-hashes.ts): found again while the
// file is as it was, never when its bytes may have changed — rewritten with the same size and its
// modification time set back, changed while it was hashed, or written too recently to be sure.
import { afterEach, describe, expect, it } from "vitest";
import { mkdtempSync, statSync, utimesSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { BuildCache } from "../../src/cache/build-cache.js";
import { inputHashes, inputHashLimits, type InputHashes } from "../../src/cache/input-hashes.js";
import { hashFile, loadHasher } from "../../src/lib/hash.js";

const defaults = { ...inputHashLimits };
afterEach(() => void Object.assign(inputHashLimits, defaults));
const pause = (ms: number) => new Promise((r) => setTimeout(r, ms));

async function setup(reuse = true) {
  await loadHasher();
  const dir = mkdtempSync(join(tmpdir(), "siftpack-hashes-"));
  const file = join(dir, "tickets.jsonl");
  writeFileSync(file, '{"body":"Door fault on car 5102, cleared at the depot."}\n');
  const cache = new BuildCache(join(dir, "cache"), reuse);
  await cache.open();
  let computed = 0;
  const hashes = () =>
    inputHashes(cache, file, undefined, async (): Promise<InputHashes> => {
      computed++;
      return { whole: await hashFile(file) };
    });
  return { file, hashes, computed: () => computed };
}

describe("input hashes kept by the file's identity", () => {
  it("are found again while the file is as it was, and not under --no-cache", async () => {
    inputHashLimits.racyMs = 0;
    const { file, hashes, computed } = await setup();
    await pause(20);
    const first = await hashes();
    const again = await hashes();
    expect(computed()).toBe(1);
    expect(again).toEqual(first);
    expect(first.whole).toEqual(await hashFile(file));

    const off = await setup(false);
    await pause(20);
    await off.hashes();
    await off.hashes();
    expect(off.computed()).toBe(2);
  });

  it("are hashed again when the bytes change though the size and modification time are set back", async () => {
    inputHashLimits.racyMs = 0;
    const { file, hashes, computed } = await setup();
    // A whole second, which utimes sets exactly.
    utimesSync(file, 1790000000, 1790000000);
    await pause(20);
    const first = await hashes();
    const before = statSync(file);
    // Same length, another car; the modification time restored (as `touch -r` or an archive would).
    writeFileSync(file, '{"body":"Door fault on car 5107, cleared at the depot."}\n');
    utimesSync(file, 1790000000, 1790000000);
    expect(statSync(file).size).toBe(before.size);
    expect(statSync(file).mtimeMs).toBe(before.mtimeMs);
    await pause(20);
    const second = await hashes();
    expect(computed()).toBe(2);
    expect(second.whole!.xxh64).not.toBe(first.whole!.xxh64);
    expect(second.whole).toEqual(await hashFile(file));
  });

  it("are not kept for a file written just before it was hashed, or changed while it was hashed", async () => {
    // Default margin: the file was written a moment ago.
    const fresh = await setup();
    await fresh.hashes();
    await fresh.hashes();
    expect(fresh.computed()).toBe(2);

    inputHashLimits.racyMs = 0;
    const { file, computed } = await setup();
    await pause(20);
    const cache = new BuildCache(join(file, "..", "cache"), true);
    await cache.open();
    const changing = () =>
      inputHashes(cache, file, undefined, async () => {
        const h = { whole: await hashFile(file) };
        writeFileSync(file, '{"body":"Pantograph dropped on the viaduct."}\n');
        return h;
      });
    await changing();
    await pause(20);
    let again = 0;
    await inputHashes(cache, file, undefined, async () => {
      again++;
      return { whole: await hashFile(file) };
    });
    expect(computed()).toBe(0);
    expect(again).toBe(1);
  });
});
