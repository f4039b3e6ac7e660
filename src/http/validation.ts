/**
 * Request schemas (zod) at the HTTP boundary. Types and shapes are checked here; meaning (known
 * factors and levels, valid settings, allowed combinations) is checked by the engine and the
 * services, which throw catalogue errors naming the field.
 */
import { z } from "zod";
import { fail } from "../errors.ts";
import { firstIssue, reasonOf } from "../issues.ts";

const name = z.string().min(1).max(100);
const text = z.string().max(10_000);
const contextValue = z.union([z.string().max(200), z.number(), z.boolean()]);

export const pageKeySchema = z.string().regex(/^[a-z0-9][a-z0-9-]{0,62}$/, "use 1–63 lowercase letters, digits and '-', starting with a letter or digit");

const level = z.strictObject({ name, value: text.optional() });
const factor = z.strictObject({ name, levels: z.array(level).min(1).max(100) });
const exclusion = z.record(z.string(), z.string());

export const definitionSchema = z.strictObject({
  factors: z.array(factor).min(1).max(20),
  exclude: z.array(exclusion).max(1000).optional(),
  interactions: z.array(z.tuple([name, name])).max(200).optional(),
});

export const createPageSchema = z.strictObject({
  key: pageKeySchema,
  name: z.string().min(1).max(200),
  factors: definitionSchema.shape.factors,
  exclude: definitionSchema.shape.exclude,
  interactions: definitionSchema.shape.interactions,
  segmentBy: z.array(z.string().min(1).max(64)).max(5).optional(),
  settings: z.record(z.string(), z.unknown()).optional(),
});

/** A create body while it is being written: the same schema with key and name optional. */
export const definitionCheckSchema = createPageSchema.partial({ key: true, name: true });

export const patchPageSchema = z.strictObject({
  name: z.string().min(1).max(200).optional(),
  settings: z.record(z.string(), z.unknown()).optional(),
  status: z.enum(["active", "paused", "frozen"]).optional(),
  addFactors: z.array(factor).max(20).optional(),
  removeFactors: z.array(name).max(20).optional(),
  addLevels: z.array(z.strictObject({ factor: name, name, value: text.optional() })).max(100).optional(),
  removeLevels: z.array(z.strictObject({ factor: name, level: name })).max(100).optional(),
  levelValues: z.array(z.strictObject({ factor: name, level: name, value: text })).max(1000).optional(),
});

export const pickSchema = z.strictObject({
  visitor: z.string().min(1).max(200),
  context: z.record(z.string().max(64), contextValue).optional(),
});

export const outcomeSchema = z.strictObject({
  pick: z.uuid(),
  event: z.string().min(1).max(200).optional(),
  value: z.number().finite().min(0).optional(),
});

export const demoTrafficSchema = z.strictObject({
  visitors: z.number().int().min(1).max(20_000),
});

export const exportQuerySchema = z.object({ format: z.enum(["json", "csv"]).default("json") });

/** Parses `input` or throws INVALID_REQUEST naming the first bad field and, in words, what to fix. */
export function parse<T extends z.ZodType>(schema: T, input: unknown, where = "body"): z.output<T> {
  if (input === undefined && where === "body") {
    throw fail("INVALID_REQUEST", { field: "body", reason: "send a JSON object with Content-Type: application/json" }, "body");
  }
  const result = schema.safeParse(input, { reportInput: true });
  if (result.success) return result.data;
  const issue = firstIssue(result.error.issues);
  let path = issue.path.map(String).join(".");
  if (issue.code === "unrecognized_keys") path = [path, issue.keys[0]].filter(Boolean).join(".");
  const field = path || where;
  // a value checked on its own (a route parameter) is named after where it came from
  throw fail("INVALID_REQUEST", { field, reason: reasonOf(issue.path.length ? issue : { ...issue, path: [where] }) }, field);
}

/** GET /pages/:key/snippet?timeout=&context=&consent= (context repeated or comma-separated). */
export const snippetQuerySchema = z.object({
  timeout: z.string().regex(/^\d{1,5}$/, "give whole milliseconds, e.g. 1000").default("1000").transform(Number).pipe(z.number().max(10_000)),
  context: z.union([z.string(), z.array(z.string())]).transform((v) => (Array.isArray(v) ? v : v.split(",")).map((s) => s.trim()).filter(Boolean)).pipe(z.array(z.string().min(1).max(64)).max(10)).optional(),
  consent: z.enum(["true", "false"]).default("true").transform((v) => v === "true"),
});
