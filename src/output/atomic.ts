// Files appear under their final name only when complete: write to a temporary name, then rename.
import { open, rename, unlink } from "node:fs/promises";
import { crashPoint } from "../lib/crash-point.js";

export async function writeFileAtomic(path: string, parts: readonly Uint8Array[]): Promise<void> {
  const tmp = `${path}.tmp`;
  const fh = await open(tmp, "w");
  try {
    for (let i = 0; i < parts.length; i++) {
      await fh.write(parts[i]);
      if (i === 0) crashPoint("write");
    }
    await fh.sync();
  } catch (err) {
    await fh.close().catch(() => {});
    await unlink(tmp).catch(() => {});
    throw err;
  }
  await fh.close();
  await rename(tmp, path);
}
