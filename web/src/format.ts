/** Turning the server's numbers and keys into the words and figures a marketer reads. */
import type { ProbabilityError, RateInterval, RetiredReport } from "./types.ts";

const count = new Intl.NumberFormat("en", { maximumFractionDigits: 0 });

export function n(value: number | null | undefined): string {
  return value === null || value === undefined ? "—" : count.format(value);
}

/** "1 factor", "5 factors". */
export function plural(count: number, word: string): string {
  return `${n(count)} ${word}${count === 1 ? "" : "s"}`;
}

/** The live count line: "5 factors · 72 combinations · 3 excluded". */
export function countLine(factors: number, total: number, excluded: number): string {
  return `${plural(factors, "factor")} · ${plural(total, "combination")} · ${n(excluded)} excluded`;
}

/** A fraction as a percentage with enough digits to tell small rates apart (3.4 %, 0.42 %). */
export function pct(value: number | null | undefined, digits?: number): string {
  if (value === null || value === undefined || !Number.isFinite(value)) return "—";
  const p = value * 100;
  const d = digits ?? (Math.abs(p) >= 10 ? 1 : Math.abs(p) >= 1 ? 2 : Math.abs(p) >= 0.01 || p === 0 ? 2 : 3);
  if (p !== 0 && Math.abs(p) < 0.001) return p > 0 ? "< 0.001\u00a0%" : "> −0.001\u00a0%";
  return `${p.toFixed(d)}\u00a0%`;
}

/**
 * A probability of being best, never more precise than its Monte-Carlo error allows: rounded to the
 * decimal of the standard error's first digit (1.6 points → "52 %", 0.3 → "96.2 %"), and never
 * "100 %" or "0 %" — at or beyond the ends the 95 % Wilson bound is shown ("> 99.6 %", "< 0.4 %").
 * Without an error (figures stored by older versions) one decimal, kept off 100 and 0 the same way.
 */
export function prob(value: number | null | undefined, error?: ProbabilityError | null): string {
  if (value === null || value === undefined) return "—";
  const se = error ? error.standardError * 100 : 0.1;
  const digits = se >= 1 ? 0 : se >= 0.1 ? 1 : 2;
  const text = (value * 100).toFixed(digits);
  const top = (100).toFixed(digits);
  const zero = (0).toFixed(digits);
  if (text === top || value >= 1) {
    const bound = error ? Math.floor(error.lower * 1000) / 10 : 99.9;
    return `> ${Math.min(bound, 99.9).toFixed(1)}\u00a0%`;
  }
  if (text === zero || value <= 0) {
    const bound = error ? Math.ceil(error.upper * 1000) / 10 : 0.1;
    return `< ${Math.max(bound, 0.1).toFixed(1)}\u00a0%`;
  }
  return `${text}\u00a0%`;
}

/** "±1.6 points over 1,000 posterior draws" — the Monte-Carlo error behind a probability of being best. */
export function probError(error: ProbabilityError | null | undefined): string {
  if (!error) return "";
  const se = error.standardError * 100;
  const spread = se > 0 ? `±${se.toFixed(se >= 1 ? 1 : 2)} points` : `between ${pct(error.lower, 1)} and ${pct(error.upper, 1)}`;
  return `Draw noise: ${spread} (${count.format(error.draws)} posterior draws).`;
}

export function rateWithInterval(rate: RateInterval | null | undefined): string {
  if (!rate) return "—";
  return `${pct(rate.mean)} (95\u00a0% interval ${pct(rate.lower)} – ${pct(rate.upper)})`;
}

export function ratio(value: number): string {
  return value >= 10 ? value.toFixed(1) : value.toFixed(2);
}

/** "source=search|campaign=spring" → "source search · campaign spring"; the pooled model gets a name. */
export function segmentLabel(segment: string): string {
  if (segment === "*") return "All traffic (pooled)";
  if (segment === "all") return "All visitors";
  return segment
    .split("|")
    .map((part) => part.replace("=", ": "))
    .join(" · ");
}

let factorOrder: string[] = [];

/** The page's factor names in order, so keys whose names contain "=" or "|" still split correctly. */
export function setFactorOrder(names: string[]): void {
  factorOrder = names;
}

/** The levels of a combination key in factor order: "headline=a|hero=b" → [["headline","a"],["hero","b"]]. */
export function keyParts(key: string): [string, string][] {
  const out: [string, string][] = [];
  let rest = key;
  for (let i = 0; i < factorOrder.length; i += 1) {
    const name = factorOrder[i];
    if (!rest.startsWith(`${name}=`)) break;
    rest = rest.slice(name.length + 1);
    const next = factorOrder[i + 1];
    const end = next === undefined ? rest.length : rest.indexOf(`|${next}=`);
    if (end < 0) break;
    out.push([name, rest.slice(0, end)]);
    rest = rest.slice(end + 1);
    if (next === undefined && out.length === factorOrder.length) return out;
  }
  // keys of another design (or before the page is known): split on the separators
  return key.split("|").map((part) => {
    const at = part.indexOf("=");
    return [part.slice(0, at), part.slice(at + 1)];
  });
}

/** A compact one-line name for a combination: the level names joined by " / ". */
export function comboShort(key: string): string {
  if (key === "other") return "all others";
  return keyParts(key)
    .map(([, level]) => level)
    .join(" / ");
}

export function when(iso: string | null | undefined, now = Date.now()): string {
  if (!iso) return "never";
  const t = Date.parse(iso);
  const seconds = Math.round((now - t) / 1000);
  const rel =
    seconds < 5 ? "just now"
    : seconds < 90 ? `${seconds} s ago`
    : seconds < 5400 ? `${Math.round(seconds / 60)} min ago`
    : seconds < 129600 ? `${Math.round(seconds / 3600)} h ago`
    : `${Math.round(seconds / 86400)} days ago`;
  return rel;
}

export function absoluteTime(iso: string): string {
  return new Date(iso).toLocaleString("en-GB", { dateStyle: "medium", timeStyle: "medium" });
}

/** The reason a combination was retired, in plain words, with the figures behind it. */
export function retiredReason(entry: RetiredReport, retireProbability: number | null | undefined): string {
  const f = entry.figures;
  if (entry.reason === "dominated") {
    const floor = retireProbability ? ` (below the ${prob(retireProbability)} floor)` : "";
    return (
      `Almost no chance of being the best: ${prob(f.probabilityBest)}${floor} for ${f.folds} updates in a row. ` +
      `Even at its best it would convert ${pct(f.upper)}, less than the leader's worst case of ${pct(f.leaderLower)}.`
    );
  }
  return entry.reason;
}
