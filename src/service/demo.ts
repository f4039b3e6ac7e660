/**
 * The demo page, an invented scenario: "Spokeline", a bicycle-repair workshop's booking page,
 * visited from search ads, social ads and its newsletter. Its hidden truth (log-odds shifts,
 * invented for the demo and used for nothing else) has a clear winner for search traffic — price
 * up front, a wheel-truing photo, "get a free quote" and the reviews badge — so a few thousand
 * demo visitors settle that segment and retire the worst combinations, while social and
 * newsletter visitors prefer other pages. Short fold interval and attribution window (seconds)
 * so the console shows learning within a minute.
 */
import { setMaxListeners } from "node:events";
import { setTimeout as sleep } from "node:timers/promises";
import { createRng, type Rng } from "../model/index.ts";
import { countPages } from "../store/repositories/pages.ts";
import type { Pool } from "pg";
import { fail } from "../errors.ts";
import { DEMO_PAGE_KEY } from "./definition.ts";
import type { PageInput, PageService } from "./pages.ts";
import type { PickService } from "./picks.ts";
import type { OutcomeService } from "./outcomes.ts";

export const demoPage: PageInput = {
  key: DEMO_PAGE_KEY,
  name: "Spokeline repair booking (demo)",
  factors: [
    { name: "headline", levels: [
      { name: "fixed-today", value: "Your bike fixed today — or the tune-up is on us" },
      { name: "pickup", value: "We collect, repair and bring your bike back" },
      { name: "price", value: "Full service from €39. No surprises on the bill." },
    ] },
    { name: "hero", levels: [
      { name: "mechanic", value: "/demo/hero-mechanic.svg" },
      { name: "wheel", value: "/demo/hero-wheel-truing.svg" },
      { name: "commuter", value: "/demo/hero-rainy-commuter.svg" },
    ] },
    { name: "cta", levels: [
      { name: "book", value: "Book a slot" },
      { name: "quote", value: "Get a free quote" },
    ] },
    { name: "badge", levels: [
      { name: "none", value: "" },
      { name: "reviews", value: "4.8 ★ from 2,300 riders" },
    ] },
  ],
  // the rainy-commuter photo already fills the band where the badge sits
  exclude: [{ hero: "commuter", badge: "reviews" }],
  segmentBy: ["source"],
  settings: {
    attributionWindowHours: 10 / 3600,
    foldIntervalSeconds: 5,
    assignmentHours: 1,
    // Spokeline's sources want different pages (social riders respond to the rainy-commuter
    // photo), so segments may stray further from the pooled model than the default allows;
    // with the default, social visitors would be served the search winner for thousands of visits.
    segmentSpread: 0.3,
  },
};

const sources = [
  { source: "search", share: 0.5 },
  { source: "social", share: 0.3 },
  { source: "newsletter", share: 0.2 },
];

/** Hidden truth: log-odds of a visitor converting, by source and the levels shown. */
const truth = {
  baseline: Math.log(0.05 / 0.95),
  main: { headline: { pickup: 0.1, price: -0.1 }, hero: { wheel: 0.05, commuter: -0.2 }, cta: { quote: 0.15 }, badge: { reviews: 0.2 } } as Record<string, Record<string, number>>,
  segments: {
    search: { shift: 0, main: { headline: { price: 0.9 }, hero: { wheel: 0.45 }, cta: { quote: 0.35 }, badge: { reviews: 0.3 } } },
    social: { shift: -0.4, main: { hero: { commuter: 0.9 }, headline: { pickup: 0.3 } } },
    newsletter: { shift: 0.5, main: { cta: { book: 0.2 } } },
  } as Record<string, { shift: number; main: Record<string, Record<string, number>> }>,
};

export function demoRate(source: string, levels: Record<string, string>): number {
  const segment = truth.segments[source];
  let x = truth.baseline + (segment?.shift ?? 0);
  for (const [factor, level] of Object.entries(levels)) {
    x += truth.main[factor]?.[level] ?? 0;
    x += segment?.main[factor]?.[level] ?? 0;
  }
  return 1 / (1 + Math.exp(-x));
}

/** Creates the demo page when the database has no page at all; true when it did. */
export async function seedDemo(pool: Pool, pages: PageService): Promise<boolean> {
  if ((await countPages(pool)) > 0) return false;
  await pages.create(demoPage);
  return true;
}

function drawSource(rng: Rng): string {
  let u = rng.next();
  for (const s of sources) if ((u -= s.share) < 0) return s.source;
  return sources[sources.length - 1].source;
}

/**
 * Streams simulated visitors through the real pick and outcome services: each gets a pick,
 * converts with the hidden truth's probability, and reports it a moment later (inside the window).
 * Paced over about `seconds` so allocations visibly shift between folds.
 */
export class DemoTraffic {
  private readonly controller = new AbortController();
  private readonly runs = new Set<Promise<void>>();
  private sequence = 0;

  constructor(private readonly picks: PickService, private readonly outcomes: OutcomeService, private readonly pages: PageService) {
    // every delayed conversion waits on this one signal
    setMaxListeners(0, this.controller.signal);
  }

  /** Streams `visitors` over `seconds` (default: 100 visitors a second, at most 30 s). */
  async start(pageKey: string, visitors: number, seconds = Math.min(30, visitors / 100)): Promise<{ accepted: number; running: true }> {
    if (pageKey !== DEMO_PAGE_KEY) throw fail("NOT_DEMO_PAGE", { page: pageKey }, "page");
    const page = await this.pages.stored(pageKey);
    const run = this.stream(page.publicKey, visitors, seconds).catch((error: unknown) => {
      if (!this.controller.signal.aborted) console.error(`facetwise: demo traffic stopped: ${(error as Error).message}`);
    });
    this.runs.add(run);
    void run.finally(() => this.runs.delete(run));
    return { accepted: visitors, running: true };
  }

  private async stream(publicKey: string, visitors: number, seconds: number): Promise<void> {
    const rng = createRng(Date.now() % 2 ** 31);
    const batch = 10;
    const pause = (seconds * 1000 * batch) / visitors;
    const pending: Promise<unknown>[] = [];
    const run = ++this.sequence;
    for (let i = 0; i < visitors && !this.controller.signal.aborted; i += batch) {
      const wave = [];
      for (let j = i; j < Math.min(visitors, i + batch); j++) wave.push(this.visit(publicKey, `demo-${run}-${Date.now().toString(36)}-${j}`, rng, pending));
      await Promise.all(wave);
      await sleep(pause, undefined, { signal: this.controller.signal }).catch(() => undefined);
    }
    await Promise.allSettled(pending);
  }

  private async visit(publicKey: string, visitor: string, rng: Rng, pending: Promise<unknown>[]): Promise<void> {
    const source = drawSource(rng);
    const pick = await this.picks.pick(DEMO_PAGE_KEY, publicKey, { visitor, context: { source } });
    const levels = Object.fromEntries(Object.entries(pick.combination).map(([f, l]) => [f, l.level]));
    if (rng.next() < demoRate(source, levels)) {
      const delay = rng.next() * 3000;
      pending.push(sleep(delay, undefined, { signal: this.controller.signal })
        .then(() => this.outcomes.record(DEMO_PAGE_KEY, publicKey, { pick: pick.pick, event: `demo-${pick.pick}` }))
        .catch(() => undefined));
    }
  }

  async stop(): Promise<void> {
    this.controller.abort();
    await Promise.allSettled([...this.runs]);
  }
}
