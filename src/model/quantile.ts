/**
 * Sample quantile with linear interpolation between order statistics (Hyndman & Fan,
 * "Sample quantiles in statistical packages", The American Statistician 50(4), 1996, definition 7),
 * found by Hoare's quickselect in expected O(n) — it reorders `values`.
 */
export function quantileInPlace(values: Float64Array, q: number): number {
  const n = values.length;
  if (n === 0) return NaN;
  const h = (n - 1) * q;
  const lo = Math.floor(h);
  const a = select(values, lo);
  if (lo + 1 >= n || h === lo) return a;
  // The next order statistic is the minimum of the part right of lo after selection.
  let b = Infinity;
  for (let i = lo + 1; i < n; i++) if (values[i] < b) b = values[i];
  return a + (h - lo) * (b - a);
}

/** Rearranges values so values[k] is the k-th smallest, smaller ones left of it. */
function select(values: Float64Array, k: number): number {
  let left = 0;
  let right = values.length - 1;
  while (right > left) {
    const mid = (left + right) >>> 1;
    // median of three as pivot
    const x = values[left], y = values[mid], z = values[right];
    const pivot = x < y ? (y < z ? y : x < z ? z : x) : x < z ? x : y < z ? z : y;
    let i = left;
    let j = right;
    while (i <= j) {
      while (values[i] < pivot) i++;
      while (values[j] > pivot) j--;
      if (i <= j) {
        const t = values[i];
        values[i] = values[j];
        values[j] = t;
        i++;
        j--;
      }
    }
    if (k <= j) right = j;
    else if (k >= i) left = i;
    else break;
  }
  return values[k];
}
