/**
 * Sample quantile with linear interpolation between order statistics — definition 7 of Hyndman &
 * Fan, "Sample quantiles in statistical packages", The American Statistician 50(4), 1996 (the
 * default of R and NumPy). Used for the p10/p90 intervals over runs.
 */
export function quantile(values: number[], p: number): number {
  if (values.length === 0) return NaN;
  const sorted = [...values].sort((a, b) => a - b);
  const h = (sorted.length - 1) * p;
  const lo = Math.floor(h);
  const hi = Math.min(lo + 1, sorted.length - 1);
  return sorted[lo]! + (h - lo) * (sorted[hi]! - sorted[lo]!);
}
