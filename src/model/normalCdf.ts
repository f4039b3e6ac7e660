/**
 * Standard normal cumulative distribution function Φ(z) = P(Z ≤ z).
 *
 * Source: Hart et al. (1968), "Computer Approximations", algorithm 5666 — a rational approximation
 * of the upper tail for |z| < 5√2 and a continued fraction beyond — in the double-precision form
 * given by G. West (2005), "Better approximations to cumulative normal functions", Wilmott
 * Magazine. Absolute error below about 1e-14. The lower tail is computed directly (not as
 * 1 − Φ(|z|)), so small p-values keep their relative accuracy (Φ(−10) ≈ 7.6e-24 to about 1e-8
 * relative, not 0).
 */
export function normalCdf(z: number): number {
  if (Number.isNaN(z)) return Number.NaN;
  const x = Math.abs(z);
  let tail: number; // P(Z > |z|)
  if (x > 37) {
    tail = 0;
  } else {
    const density = Math.exp(-(x * x) / 2);
    if (x < 7.07106781186547) {
      let num = 3.52624965998911e-2 * x + 0.700383064443688;
      num = num * x + 6.37396220353165;
      num = num * x + 33.912866078383;
      num = num * x + 112.079291497871;
      num = num * x + 221.213596169931;
      num = num * x + 220.206867912376;
      let den = 8.83883476483184e-2 * x + 1.75566716318264;
      den = den * x + 16.064177579207;
      den = den * x + 86.7807322029461;
      den = den * x + 296.564248779674;
      den = den * x + 637.333633378831;
      den = den * x + 793.826512519948;
      den = den * x + 440.413735824752;
      tail = (density * num) / den;
    } else {
      let frac = x + 0.65;
      frac = x + 4 / frac;
      frac = x + 3 / frac;
      frac = x + 2 / frac;
      frac = x + 1 / frac;
      tail = density / frac / 2.506628274631;
    }
  }
  return z > 0 ? 1 - tail : tail;
}
