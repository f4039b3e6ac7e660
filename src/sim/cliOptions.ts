/**
 * Flag parsing for `facetwise simulate` and `facetwise plan`: node:util parseArgs in strict mode,
 * with every problem (unknown flag, missing value, a number out of range) turned into one
 * INVALID_OPTION error that names the flag and says what is expected.
 */
import { fail } from "../errors.ts";

/** Runs a node:util parseArgs call (strict mode), re-throwing its errors as INVALID_OPTION. */
export function parseFlags<T>(parse: () => T): T {
  try {
    return parse();
  } catch (error) {
    const text = (error as Error).message.split("\n")[0]!.replace(/\. To specify a positional argument.*$/, "");
    const flag = /'(-[^' ]+)/.exec(text)?.[1] ?? /"(-[^" ]+)"/.exec(text)?.[1] ?? "";
    throw fail("INVALID_OPTION", { option: flag || "(arguments)", reason: text.replace(/^[^:]*:\s*/, "") });
  }
}

/** A number from a flag, checked against [min, max] (and whole when `integer`). */
export function numberFlag(
  flag: string,
  value: string | undefined,
  fallback: number,
  rule: { min: number; max: number; integer?: boolean; exclusiveMin?: boolean; exclusiveMax?: boolean },
): number {
  if (value === undefined) return fallback;
  const x = Number(value);
  const range = `${rule.exclusiveMin ? "above" : "at least"} ${rule.min} and ${rule.exclusiveMax ? "below" : "at most"} ${rule.max}`;
  const tooLow = rule.exclusiveMin ? x <= rule.min : x < rule.min;
  const tooHigh = rule.exclusiveMax ? x >= rule.max : x > rule.max;
  if (value.trim() === "" || !Number.isFinite(x) || tooLow || tooHigh || (rule.integer && !Number.isInteger(x))) {
    throw fail("INVALID_OPTION", {
      option: `--${flag}`,
      reason: `expected ${rule.integer ? "a whole number" : "a number"} ${range}, got "${value}"`,
    });
  }
  return x;
}
