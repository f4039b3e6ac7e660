/**
 * Adds the first `count` entries of the draws' rows of features idx[offset …] (m of them) to
 * `out`: for feature-major draws (sampling.ts; feature j's row starts at j·stride), the linear
 * predictors xᵀθ of a combination whose active features those are, for every draw at once.
 * Four rows per pass over `out`: the scans that call this are bound by passes over the draws
 * (measured: a 1,280-combination scan 15.7 → 9.5 ms against one row per pass).
 */
export function addRows(idx: Int32Array, offset: number, m: number, samples: Float64Array, stride: number, count: number, out: Float64Array): void {
  const end = offset + m;
  let a = offset;
  for (; a + 3 < end; a += 4) {
    const r0 = idx[a] * stride;
    const r1 = idx[a + 1] * stride;
    const r2 = idx[a + 2] * stride;
    const r3 = idx[a + 3] * stride;
    for (let s = 0; s < count; s++) out[s] += samples[r0 + s] + samples[r1 + s] + (samples[r2 + s] + samples[r3 + s]);
  }
  for (; a < end; a++) {
    const row = idx[a] * stride;
    for (let s = 0; s < count; s++) out[s] += samples[row + s];
  }
}
