import { requireCount } from "./argumentGuards.ts";

export interface FisherExactResult {
  /** P(A ≤ a): evidence that the first row's odds are lower (odds ratio < 1). */
  less: number;
  /** P(A ≥ a): evidence that the first row's odds are higher (odds ratio > 1). */
  greater: number;
  /** Sum of the probabilities of all tables no more probable than the observed one. */
  twoSided: number;
}

// Tables whose probability is within this relative distance of the observed one count as "no
// more probable": without it rounding in the recursion could drop a tie (R's fisher.test uses 1e-7).
const TIE_TOLERANCE = 1e-7;

/**
 * Fisher's exact test for the 2×2 table [[a, b], [c, d]] (rows: the two groups; columns:
 * converted, not converted). With the margins fixed, the top-left cell A is hypergeometric:
 * P(A = x) = C(a+b, x)·C(c+d, a+c−x) / C(n, a+c).
 *
 * Source: R. A. Fisher (1935), "The Design of Experiments" (the tea-tasting example); the
 * two-sided p-value by the method of summing tables no more probable than the observed one, as in
 * A. Agresti (2002), "Categorical Data Analysis", 2nd ed., §3.5.
 *
 * The probabilities are built by the ratio P(x+1)/P(x) = (r1−x)(c1−x) / ((x+1)(r2−c1+x+1)) outward
 * from the mode and normalised at the end, so no factorial is ever formed and tables with millions
 * of visitors neither overflow nor lose the observed table's probability to underflow near the
 * mode. Throws INVALID_ARGUMENT for a negative or fractional count.
 */
export function fisherExact(a: number, b: number, c: number, d: number): FisherExactResult {
  requireCount("a", a);
  requireCount("b", b);
  requireCount("c", c);
  requireCount("d", d);
  const r1 = a + b;
  const r2 = c + d;
  const c1 = a + c;
  const n = r1 + r2;
  const lo = Math.max(0, c1 - r2);
  const hi = Math.min(r1, c1);
  const mode = Math.min(hi, Math.max(lo, Math.floor(((r1 + 1) * (c1 + 1)) / (n + 2))));

  // Unnormalised weights, 1 at the mode.
  const w = new Float64Array(hi - lo + 1);
  w[mode - lo] = 1;
  for (let x = mode; x < hi; x++) {
    w[x + 1 - lo] = (w[x - lo] * ((r1 - x) * (c1 - x))) / ((x + 1) * (r2 - c1 + x + 1));
  }
  for (let x = mode; x > lo; x--) {
    // Inverse of the ratio above, stepping from x down to x − 1.
    w[x - 1 - lo] = (w[x - lo] * (x * (r2 - c1 + x))) / ((r1 - x + 1) * (c1 - x + 1));
  }

  const observed = w[a - lo];
  const threshold = observed * (1 + TIE_TOLERANCE);
  let total = 0;
  let less = 0;
  let greater = 0;
  let twoSided = 0;
  for (let x = lo; x <= hi; x++) {
    const wx = w[x - lo];
    total += wx;
    if (x <= a) less += wx;
    if (x >= a) greater += wx;
    if (wx <= threshold) twoSided += wx;
  }
  return {
    less: Math.min(1, less / total),
    greater: Math.min(1, greater / total),
    twoSided: Math.min(1, twoSided / total),
  };
}
