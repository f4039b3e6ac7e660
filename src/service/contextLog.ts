/**
 * Raw context values and what normalisation made of them, for the report: per page and segment
 * key, the most recent distinct raw values (at most 10, most recent first) with their normalised
 * value and how often each was seen. Kept in memory by the process that served the picks, since
 * it started; it is an explanation of the rule at work, not a record.
 */
import { normalizeContextValue } from "./normalizeContext.ts";

const PER_KEY = 10;

export interface RawContextValue { raw: string; normalized: string; seen: number }

export class ContextLog {
  private readonly pages = new Map<string, Map<string, Map<string, RawContextValue>>>();

  record(pageKey: string, keys: readonly string[], context: Record<string, string | number | boolean> | undefined): void {
    let page = this.pages.get(pageKey);
    if (!page) this.pages.set(pageKey, (page = new Map()));
    for (const key of keys) {
      const value = context && Object.hasOwn(context, key) ? context[key] : undefined;
      const raw = value === undefined ? "" : String(value);
      let values = page.get(key);
      if (!values) page.set(key, (values = new Map()));
      const entry = values.get(raw) ?? { raw, normalized: normalizeContextValue(value), seen: 0 };
      entry.seen += 1;
      values.delete(raw); // re-insert: a Map keeps insertion order, so the last is the most recent
      values.set(raw, entry);
      if (values.size > PER_KEY) values.delete(values.keys().next().value as string);
    }
  }

  /** {key: [{raw, normalized, seen}, …]}, most recent first. */
  recent(pageKey: string): Record<string, RawContextValue[]> {
    const out: Record<string, RawContextValue[]> = {};
    for (const [key, values] of this.pages.get(pageKey) ?? []) out[key] = [...values.values()].reverse().map((v) => ({ ...v }));
    return out;
  }
}
