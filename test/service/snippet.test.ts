/**
 * The integration snippet (src/service/snippet.ts) and the client's integrity value
 * (src/service/clientAssets.ts). References: W3C Subresource Integrity, section 3.1 example
 * ("alert('Hello, world.');" → sha384-H8BRh8j4…); CSP Level 3, hash-source example (the same
 * script → 'sha256-qznLcsRO…'); HTML Living Standard character references (&amp; &lt; &gt; &quot;
 * and numeric &#…;). The two digests are quoted from the specifications' examples from memory and
 * agree with node:crypto.
 */
import { describe, expect, it } from "vitest";
import { attributeValue, cspHash, snippetOf, waitStyle } from "../../src/service/snippet.ts";
import { clientAssets, integrityOf } from "../../src/service/clientAssets.ts";

const HELLO = "alert('Hello, world.');";

/** Decodes the character references attributeValue uses, per the HTML standard's table. */
const decode = (s: string) => s.replace(/&(amp|lt|gt|quot);|&#(\d+);|&#x([0-9a-f]+);/gi, (_, named: string, dec: string, hex: string) =>
  named ? ({ amp: "&", lt: "<", gt: ">", quot: '"' } as Record<string, string>)[named] : String.fromCodePoint(dec ? Number(dec) : parseInt(hex, 16)));

const HOSTILE = ["x\u2028alert(1)//", "\"><script>alert(1)</script>", "'onload='alert(1)", "a&amp;b", "\u2029</script><!--", "plain"];

describe("snippet", () => {
  it("computes SRI and CSP hashes as the specifications' examples", () => {
    expect(integrityOf(HELLO)).toBe("sha384-H8BRh8j48O9oYatfu5AZzq6A9RINhZO5H16dQZngK7T62em8MUt1FLm52t+eX6xO");
    expect(cspHash(HELLO)).toBe("'sha256-qznLcsROx4GACP2dm0UCKCzCG+HiZ1guq6ZZDob/Tng='");
  });

  it("escapes attribute values so nothing can end them, and decodes back to the original", () => {
    for (const raw of HOSTILE) {
      const escaped = attributeValue(raw);
      expect(escaped).not.toMatch(/["'<>\u2028\u2029]/);
      expect(decode(escaped)).toBe(raw);
    }
  });

  it("is a style and one async script carrying the page key, public key, context and options", () => {
    const { html, integrity, csp } = snippetOf({ key: "spring", publicKey: "pk_abc" }, "https://fw.example", "sha384-xyz", { timeout: 800, context: ["source", "a,b%c"], consent: false });
    expect(integrity).toBe("sha384-xyz");
    const [style, script] = html.split("\n");
    expect(style).toBe(`<style>${waitStyle(800)}</style>`);
    expect(script).toBe('<script async src="https://fw.example/client/v1.js" integrity="sha384-xyz" crossorigin="anonymous" data-page="spring" data-key="pk_abc" data-context="source,a%2Cb%25c" data-timeout="800" data-consent="false"></script>');
    // the client splits on commas and percent-decodes each name
    expect("source,a%2Cb%25c".split(",").map(decodeURIComponent)).toEqual(["source", "a,b%c"]);
    expect(csp).toBe(`script-src https://fw.example; connect-src https://fw.example; style-src ${cspHash(waitStyle(800))}`);
  });

  it("keeps hostile context names and origins inside their attributes", () => {
    for (const raw of HOSTILE) {
      const { html } = snippetOf({ key: "k", publicKey: "pk" }, `http://${raw}`, "sha384-x", { timeout: 1000, context: [raw], consent: true });
      expect(html).not.toMatch(/[\u2028\u2029]/);
      expect(html.split("</script>")).toHaveLength(2);
      expect(html.split("<script")).toHaveLength(2);
      const attributes = [...html.matchAll(/ ([a-z-]+)="([^"]*)"/g)].map((m) => m[1]);
      expect(attributes).toEqual(["src", "integrity", "crossorigin", "data-page", "data-key", "data-context", "data-timeout"]);
    }
  });

  it("names the integrity of the client file the server ships", () => {
    const { classic, module } = clientAssets();
    expect(classic.integrity).toBe(integrityOf(classic.body));
    expect(module.integrity).toMatch(/^sha384-[A-Za-z0-9+/]{64}$/);
    expect(classic.gzip.length).toBeLessThan(classic.body.length);
  });
});
