/**
 * The context normalisation rule (src/service/normalizeContext.ts). Unicode references, quoted
 * from memory: UAX #15 (NFKC maps U+FB01 "ﬁ" to "fi" and full-width Latin U+FF21… to ASCII),
 * CaseFolding.txt (U+00DF "ß" and U+1E9E "ẞ" fold to "ss", status F); U+2028/U+2029 are
 * whitespace (White_Space=yes in PropList.txt).
 */
import { describe, expect, it } from "vitest";
import { NONE, normalizeContext, normalizeContextValue } from "../../src/service/normalizeContext.ts";

describe("normalizeContextValue", () => {
  it("makes one campaign of the spellings the issue names, and of their cousins", () => {
    for (const raw of ["Spring Sale", "spring-sale ", "SPRING_SALE", "  spring   sale\t", "spring - _ sale", "Spring\u2028Sale", "-spring-sale-"]) {
      expect(normalizeContextValue(raw), JSON.stringify(raw)).toBe("spring-sale");
    }
  });

  it("folds case and compatibility forms as Unicode does", () => {
    expect(normalizeContextValue("Straße")).toBe("strasse");
    expect(normalizeContextValue("STRASSE")).toBe("strasse");
    expect(normalizeContextValue("\u1E9E")).toBe("ss");
    expect(normalizeContextValue("\uFB01nance")).toBe("finance");
    expect(normalizeContextValue("\uFF33\uFF30\uFF32\uFF29\uFF2E\uFF27")).toBe("spring"); // full-width SPRING
  });

  it("keeps other punctuation and distinct words apart", () => {
    expect(normalizeContextValue("50% off")).toBe("50%-off");
    expect(normalizeContextValue("spring sale 2")).not.toBe(normalizeContextValue("spring sale"));
  });

  it("calls nothing (none): missing, null, empty, blank or only separators", () => {
    for (const raw of [undefined, null, "", "   ", "-", "_ -", "\u2029"]) expect(normalizeContextValue(raw)).toBe(NONE);
    expect(NONE).toBe("(none)");
  });

  it("writes numbers and booleans as text", () => {
    expect(normalizeContextValue(3)).toBe("3");
    expect(normalizeContextValue(true)).toBe("true");
  });
});

describe("normalizeContext", () => {
  it("gives every segment key a value, and reads only the context's own keys", () => {
    expect(normalizeContext(["source", "campaign"], { source: " Search ", other: "x" })).toEqual({ source: "search", campaign: NONE });
    expect(normalizeContext(["constructor", "toString"], {})).toEqual({ constructor: NONE, toString: NONE });
    expect(normalizeContext([], { source: "a" })).toEqual({});
  });
});
