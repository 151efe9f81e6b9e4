// A one-line progress display on stderr, only when stderr is a terminal.

export function progressLine(): ((p: { read: number; kept: number; dropped: number; quarantined: number }) => void) | undefined {
  if (!process.stderr.isTTY) return undefined;
  const started = Date.now();
  return (p) => {
    const secs = (Date.now() - started) / 1000;
    const rate = secs > 0 ? Math.round(p.read / secs) : 0;
    process.stderr.write(`\r\x1b[Kread ${p.read}  kept ${p.kept}  dropped ${p.dropped}  quarantined ${p.quarantined}  (${rate} records/s)`);
  };
}

export function clearProgress(): void {
  if (process.stderr.isTTY) process.stderr.write("\r\x1b[K");
}
