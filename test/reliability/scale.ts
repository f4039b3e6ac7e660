/**
 * Size of the reliability suites: small in CI (minutes on a 2-core machine), nightly size with
 * FACETWISE_RELIABILITY_SCALE=nightly. `pick(ci, nightly)` chooses a figure.
 */
export const nightly = (): boolean => process.env.FACETWISE_RELIABILITY_SCALE === "nightly";

export function size(ci: number, nightlySize: number): number {
  return nightly() ? nightlySize : ci;
}
