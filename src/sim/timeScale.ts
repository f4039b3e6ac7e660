/**
 * Maps the page's time-based settings onto simulated traffic: visitors arrive evenly at
 * `visitorsPerDay`, so an attribution window, a fold interval or a half-life becomes a number of
 * visitors, and visitor i arrives at i · (86 400 000 / visitorsPerDay) ms (the `now` the engine sees).
 */
export interface TimeScale {
  msPerVisitor: number;
  /** Visitors between folds (at least 1). */
  foldEvery: number;
  /** Visitors until a pick's attribution window closes. */
  windowVisitors: number;
}

const MS_PER_DAY = 86_400_000;

export function timeScale(visitorsPerDay: number, foldIntervalSeconds: number, attributionWindowHours: number): TimeScale {
  return {
    msPerVisitor: MS_PER_DAY / visitorsPerDay,
    foldEvery: Math.max(1, Math.round((foldIntervalSeconds * visitorsPerDay) / 86_400)),
    windowVisitors: Math.round((attributionWindowHours * visitorsPerDay) / 24),
  };
}
