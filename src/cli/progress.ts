// A one-line progress bar on stderr, redrawn at most ten times a second; off when stderr is not a terminal.
export class Progress {
  private lastDraw = 0;
  private readonly startedAt = Date.now();

  constructor(
    private readonly out: NodeJS.WritableStream & { columns?: number },
    private readonly total: number,
    private readonly enabled: boolean,
  ) {}

  update(done: number): void {
    if (!this.enabled) return;
    const now = Date.now();
    if (now - this.lastDraw < 100) return;
    this.lastDraw = now;
    this.draw(done);
  }

  done(): void {
    if (!this.enabled) return;
    this.draw(this.total);
    this.out.write('\n');
  }

  private draw(done: number): void {
    const width = Math.max(10, Math.min(40, (this.out.columns ?? 80) - 40));
    const frac = this.total > 0 ? done / this.total : 1;
    const filled = Math.round(frac * width);
    const elapsed = (Date.now() - this.startedAt) / 1000;
    const eta = frac > 0 && frac < 1 ? ` ~${Math.ceil((elapsed / frac) * (1 - frac))} s left` : '';
    this.out.write(`\r[${'#'.repeat(filled)}${'-'.repeat(width - filled)}] ${done}/${this.total} stars${eta}   `);
  }
}
