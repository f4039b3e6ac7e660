/** client/dist is what `npm run build:client` makes of client/src today (the served bytes and their SRI hash follow it). */
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
// @ts-expect-error: a plain .mjs build script without type declarations
import { buildClient } from "../../client/build.mjs";

const dist = join(import.meta.dirname, "..", "..", "client", "dist");

describe("client build", () => {
  it("the committed client/dist matches a fresh build of client/src", async () => {
    const built = (await buildClient(false)) as { js: string; mjs: string };
    expect(readFileSync(join(dist, "v1.js"), "utf8")).toBe(built.js);
    expect(readFileSync(join(dist, "v1.mjs"), "utf8")).toBe(built.mjs);
  });
});
