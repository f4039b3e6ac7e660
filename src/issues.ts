/**
 * zod issues → plain sentences saying what to fix. zod's own texts ("Too small: expected string
 * to have >=1 characters") never reach users: each issue is rewritten from its code, its bounds
 * and its path, whose parts are named by two small tables (list items and field names), so a new
 * schema field needs at most a word here, never its own message. Used for request bodies
 * (src/http/validation.ts), for page settings, whose schema is the engine's, and for scenario
 * files (src/sim/scenario.ts).
 */
import type { z } from "zod";

type Issue = z.core.$ZodIssue & { input?: unknown };

/** What one item of a list is called: factors.0 → "factor 1". */
const ITEM: Record<string, string> = {
  factors: "factor", levels: "level", exclude: "exclusion rule", interactions: "interaction pair",
  segmentBy: "segment key", addFactors: "added factor", removeFactors: "removed factor",
  addLevels: "added level", removeLevels: "removed level", levelValues: "level value",
  segments: "segment", phases: "phase", pairs: "combination effect",
};

/** Field names as words; any other key (a context name, a factor named in a rule) is quoted. */
const FIELD: Record<string, string> = {
  key: "page key", name: "name", value: "value", factor: "factor", level: "level", levels: "levels",
  visitor: "visitor id", context: "context", pick: "pick id", event: "event id", visitors: "number of visitors",
  status: "status", format: "format", settings: "settings", factors: "factors", exclude: "exclusion rules",
  interactions: "interaction pairs", segmentBy: "segment keys", body: "body", query: "query",
  // scenario files (src/sim/scenario.ts)
  truth: "truth", baseline: "baseline rate", share: "traffic share", segments: "segments", phases: "phases",
  mde: "mde", visitorsPerDay: "visitors per day", runs: "number of runs", engine: "engine settings",
  main: "main effects", pairs: "effects of level combinations", when: "levels", shift: "log-odds shift",
  rates: "exact rates", from: "starting visitor",
};

/** Fields whose word is a plural ("the factors are missing"). */
const PLURAL = new Set(["factors", "levels", "settings", "exclude", "interactions", "segmentBy", "segments", "phases", "main", "pairs", "rates", "when"]);

/** Expected types as words. */
const TYPE: Record<string, string> = {
  string: "text", number: "a number", int: "a whole number", boolean: "true/false", array: "a list",
  object: "an object", record: "an object", tuple: "a list", uuid: "a UUID",
};

const quote = (key: string) => JSON.stringify(key.length > 40 ? `${key.slice(0, 40)}…` : key);
const word = (key: string) => FIELD[key] ?? quote(key);
const plural = (noun: string) => (noun.endsWith("y") ? `${noun.slice(0, -1)}ies` : `${noun}s`);
const count = (n: number, noun: string) => `${n} ${n === 1 ? noun : plural(noun)}`;
const oneOf = (words: string[]) => words.length < 2 ? words.join("") : `${words.slice(0, -1).join(", ")} or ${words[words.length - 1]}`;

function received(input: unknown): string {
  if (input === null) return "null";
  if (Array.isArray(input)) return "a list";
  if (typeof input === "string") return "text";
  if (typeof input === "number" || typeof input === "boolean") return String(input);
  return typeof input === "object" ? "an object" : typeof input;
}

/**
 * The path in words: the item it sits in ("level 2 of factor 1", or null at the top of the body),
 * and the thing itself ("the name of level 2 of factor 1", "factor 1", "the visitor id").
 */
function named(path: PropertyKey[]): { owner: string | null; last: string | null; subject: string; verb: "is" | "are" } {
  const items: string[] = [];
  let last: string | null = null;
  for (let i = 0; i < path.length; i++) {
    const part = String(path[i]);
    if (typeof path[i] === "number") items.unshift(`entry ${(path[i] as number) + 1}`);
    else if (typeof path[i + 1] === "number") {
      items.unshift(`${ITEM[part] ?? `entry of ${word(part)}`} ${(path[i + 1] as number) + 1}`);
      i++;
    } else if (i === path.length - 1) last = part;
    else items.unshift(`the ${word(part)}`);
  }
  const owner = items.length ? items.join(" of ") : null;
  const lastWord = last === null ? "" : last in FIELD ? `the ${FIELD[last]}` : quote(last);
  const subject = last === null ? owner ?? "the body" : owner ? `${lastWord} ${last in FIELD ? "of" : "in"} ${owner}` : lastWord;
  // "is" or "are": the subject is plural only when it is a plural field itself, not a part of one
  const verb = last !== null && owner === null && PLURAL.has(last) ? "are" : "is";
  return { owner, last, subject, verb };
}

/**
 * The issue to report: the first one, or — when one value broke several bounds of one kind
 * (1.5 for "at most 1" and "less than 1") — the tightest of them, so fixing it is enough.
 */
export function firstIssue(issues: Issue[]): Issue {
  const first = issues[0];
  const same = issues.filter((i) => i.code === first.code && i.path.join(".") === first.path.join("."));
  const limit = (i: Issue) => i.code === "too_big" ? Number(i.maximum) - (i.inclusive ? 0 : 1e-12)
    : i.code === "too_small" ? -(Number(i.minimum) + (i.inclusive ? 0 : 1e-12)) : 0;
  return same.reduce((best, i) => (limit(i) < limit(best) ? i : best), first);
}

/** A sentence saying what to fix, without the path (the error's `field` carries it). */
export function reasonOf(issue: Issue, subject = named(issue.path).subject): string {
  const { owner, last, verb } = named(issue.path);
  switch (issue.code) {
    case "invalid_type": {
      const expected = TYPE[issue.expected] ?? issue.expected;
      return issue.input === undefined ? `${subject} ${verb} missing: send ${expected}` : `${subject} must be ${expected}, not ${received(issue.input)}`;
    }
    case "too_small": {
      const n = Number(issue.minimum);
      const bound = issue.inclusive ? `at least ${n}` : `more than ${n}`;
      if (issue.origin === "string") {
        if (n === 1 && issue.inclusive) return owner && last ? `${owner} needs a ${FIELD[last] ?? quote(last)}` : `${subject} cannot be empty`;
        return `${subject} needs ${bound} characters`;
      }
      if (issue.origin === "array" || issue.origin === "set") {
        const items = `${issue.inclusive ? "at least" : "more than"} ${count(n, (last && ITEM[last]) ?? "entry")}`;
        return owner ? `${owner} needs ${items}` : `add ${items}`;
      }
      return `${subject} must be ${bound}`;
    }
    case "too_big": {
      const n = Number(issue.maximum);
      const bound = issue.inclusive ? `at most ${n}` : `less than ${n}`;
      if (issue.origin === "string") return `${subject} is too long: use ${bound} characters`;
      if (issue.origin === "array" || issue.origin === "set") {
        const items = `${issue.inclusive ? "at most" : "fewer than"} ${count(n, (last && ITEM[last]) ?? "entry")}`;
        return owner ? `${owner} can have ${items}` : `use ${items}`;
      }
      return `${subject} must be ${bound}`;
    }
    case "invalid_format":
      // every pattern in validation.ts carries its own sentence saying what to use
      return issue.format === "regex" ? `${subject} is not valid: ${issue.message}` : `${subject} must be ${TYPE[issue.format] ?? `a valid ${issue.format}`}`;
    case "invalid_value":
      return `${subject} must be ${issue.values.length > 2 ? "one of " : ""}${oneOf(issue.values.map((v) => JSON.stringify(v)))}`;
    case "unrecognized_keys":
      return `${quote(issue.keys[0])} is not a known field here: remove it or check its spelling`;
    case "invalid_union": {
      // one branch had the right type but broke a bound: that branch's complaint is the useful one
      const near = issue.errors.find((branch) => branch.every((i) => i.code !== "invalid_type"));
      if (near?.[0]) return reasonOf({ ...near[0], path: issue.path, input: issue.input } as Issue, subject);
      const types = issue.errors.map((branch) => branch[0]?.code === "invalid_type" ? TYPE[branch[0].expected] ?? branch[0].expected : null);
      if (types.every((t): t is string => t !== null)) return `${subject} must be ${oneOf(types)}${issue.input === undefined ? "" : `, not ${received(issue.input)}`}`;
      return `${subject} ${verb} not valid`;
    }
    case "invalid_key":
      return issue.issues[0] ? reasonOf({ ...issue.issues[0], path: issue.path } as Issue, `the name of ${subject}`) : `the name of ${subject} is not valid`;
    case "not_multiple_of":
      return `${subject} must be a multiple of ${issue.divisor}`;
    case "custom":
      return issue.message;
    default:
      return `${subject} ${verb} not valid`;
  }
}
