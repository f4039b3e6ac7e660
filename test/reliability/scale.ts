/**
 * Size of the reliability suites: 1 in CI (minutes on a 2-core machine), 5 with
 * FACETWISE_RELIABILITY_SCALE=nightly (or any positive number given there).
 */
export function reliabilityScale(): number {
  const raw = process.env.FACETWISE_RELIABILITY_SCALE;
  if (!raw) return 1;
  if (raw === "nightly") return 5;
  const n = Number(raw);
  return Number.isFinite(n) && n > 0 ? n : 1;
}
