/**
 * Walker's alias method in Vose's numerically stable form (Vose, "A linear algorithm for
 * generating random numbers with a given distribution", IEEE Trans. Software Eng. 17(9), 1991):
 * O(n) construction, then one uniform draw picks column i = ⌊u·n⌋ and keeps it when the
 * fractional part is below prob[i], else takes alias[i].
 */
export interface AliasTable {
  probability: number[];
  alias: number[];
}

export function buildAliasTable(weights: ArrayLike<number>): AliasTable {
  const n = weights.length;
  let total = 0;
  for (let i = 0; i < n; i++) total += weights[i];
  const scaled = new Float64Array(n);
  for (let i = 0; i < n; i++) scaled[i] = (weights[i] * n) / total;
  const probability = new Array<number>(n).fill(1);
  const alias = Array.from({ length: n }, (_, i) => i);
  const small: number[] = [];
  const large: number[] = [];
  for (let i = 0; i < n; i++) (scaled[i] < 1 ? small : large).push(i);
  while (small.length > 0 && large.length > 0) {
    const s = small.pop()!;
    const g = large.pop()!;
    probability[s] = scaled[s];
    alias[s] = g;
    scaled[g] = scaled[g] + scaled[s] - 1;
    (scaled[g] < 1 ? small : large).push(g);
  }
  // Leftovers are 1 up to round-off (Vose's fix): they keep probability 1 and themselves.
  return { probability, alias };
}

/** One draw from the table with a single uniform u ∈ [0,1). */
export function aliasDraw(table: AliasTable, u: number): number {
  const x = u * table.probability.length;
  const i = Math.floor(x);
  return x - i < table.probability[i] ? i : table.alias[i];
}
