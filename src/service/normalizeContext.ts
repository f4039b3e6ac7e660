/**
 * Context values as segments see them. The rule, applied on the server to every value of the
 * page's segmentBy keys before the segment is chosen (so "Spring Sale", "spring-sale " and
 * "SPRING_SALE" are one campaign):
 *
 *  1. numbers and booleans become their text; a missing key or null is "(none)";
 *  2. Unicode NFKC normalisation (compatibility forms: "ﬁ" → "fi", full-width letters → ASCII);
 *  3. case-fold: lower-, upper-, then lower-case, which folds "ß" and "ẞ" to "ss" as Unicode's full
 *     case folding (CaseFolding.txt, status F) does, beyond toLowerCase;
 *  4. every run of whitespace (incl. U+2028/U+2029), control characters, '-' and '_' becomes one '-';
 *  5. '-' at either end is dropped; what is left empty is "(none)".
 *
 * Sources: Unicode Standard Annex #15 (normalisation forms), Unicode CaseFolding.txt.
 */

export const NONE = "(none)";

export function normalizeContextValue(raw: string | number | boolean | null | undefined): string {
  if (raw === undefined || raw === null) return NONE;
  const folded = String(raw).normalize("NFKC").toLowerCase().toUpperCase().toLowerCase()
    .replace(/[\s\p{Cc}_-]+/gu, "-")
    .replace(/^-+|-+$/g, "");
  return folded === "" ? NONE : folded;
}

/** The normalised value of each of `keys` (the page's segmentBy), "(none)" where the context has none. */
export function normalizeContext(keys: readonly string[], context: Record<string, string | number | boolean> | undefined): Record<string, string> {
  const out: Record<string, string> = {};
  for (const key of keys) out[key] = normalizeContextValue(context && Object.hasOwn(context, key) ? context[key] : undefined);
  return out;
}
