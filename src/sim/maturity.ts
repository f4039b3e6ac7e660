/**
 * When a pick's outcome reaches the policy (`facetwise simulate --maturity …`):
 *   "server" (default) — the server's rule (src/store/repositories/folds.ts): every pick folds as a
 *                 trial at the first fold after it is served and its conversion at the first fold
 *                 after it is reported inside the attribution window. The simulator reports
 *                 conversions at once, so a pick and its outcome reach the policy together.
 *   "window"    — every pick, converting or not, reaches the policy when its attribution window
 *                 closes: also unbiased, but nothing is learnt during the first window; kept to
 *                 measure what waiting for the window costs.
 * (The earlier server rule — a conversion at once, a non-conversion at window close — fed the model
 * recent conversions without their non-conversions and inflated its rates 2–10×; it is gone.)
 */
export type MaturityRule = "server" | "window";

export type OnMature = (segment: number, combination: number, converted: boolean) => void;

export class MaturityQueue {
  private visitor = new Float64Array(1024);
  private segment = new Uint16Array(1024);
  private combination = new Int32Array(1024);
  private converted = new Uint8Array(1024);
  private head = 0;
  private size = 0;

  constructor(
    private readonly windowVisitors: number,
    private readonly rule: MaturityRule,
    private readonly onMature: OnMature,
  ) {}

  /** Records visitor `visitor`'s pick. */
  add(visitor: number, segment: number, combination: number, converted: boolean): void {
    if (this.rule === "server") {
      this.onMature(segment, combination, converted);
      return;
    }
    if (this.size === this.visitor.length) this.grow();
    const at = (this.head + this.size) % this.visitor.length;
    this.visitor[at] = visitor;
    this.segment[at] = segment;
    this.combination[at] = combination;
    this.converted[at] = converted ? 1 : 0;
    this.size++;
  }

  /** Matures every waiting pick whose window has closed by visitor index `now` (FIFO: windows are equal). */
  drain(now: number): void {
    const capacity = this.visitor.length;
    while (this.size > 0 && this.visitor[this.head]! + this.windowVisitors <= now) {
      this.onMature(this.segment[this.head]!, this.combination[this.head]!, this.converted[this.head] === 1);
      this.head = (this.head + 1) % capacity;
      this.size--;
    }
  }

  private grow(): void {
    const capacity = this.visitor.length;
    const order = (i: number): number => (this.head + i) % capacity;
    const copy = <T extends Float64Array | Uint16Array | Int32Array | Uint8Array>(from: T, to: T): T => {
      for (let i = 0; i < this.size; i++) to[i] = from[order(i)]!;
      return to;
    };
    this.visitor = copy(this.visitor, new Float64Array(capacity * 2));
    this.segment = copy(this.segment, new Uint16Array(capacity * 2));
    this.combination = copy(this.combination, new Int32Array(capacity * 2));
    this.converted = copy(this.converted, new Uint8Array(capacity * 2));
    this.head = 0;
  }
}
