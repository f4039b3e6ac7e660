/**
 * A one-line progress bar on stdout for a terminal; a no-op when the stream is not a TTY (or when
 * the caller turns it off, e.g. for --json), so logs and pipes never see control characters.
 */
export interface Progress {
  update(done: number): void;
  finish(): void;
}

export function progressBar(label: string, enabled: boolean, stream: NodeJS.WriteStream = process.stdout): Progress {
  if (!enabled || !stream.isTTY) return { update() {}, finish() {} };
  const width = 30;
  const started = Date.now();
  let last = -1;
  return {
    update(done) {
      const percent = Math.floor(done * 100);
      if (percent === last) return;
      last = percent;
      const filled = Math.round(done * width);
      const seconds = ((Date.now() - started) / 1000).toFixed(0);
      stream.write(`\r${label} [${"#".repeat(filled)}${"-".repeat(width - filled)}] ${percent}% ${seconds}s`);
    },
    finish() {
      stream.write("\r\x1b[K");
    },
  };
}
