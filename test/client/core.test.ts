/**
 * The client's context classes (client/src/core.js). User-agent strings are real browsers'
 * published strings, quoted from memory (Apple Safari on iPhone and iPad, Chrome on Android phone
 * and tablet, Firefox on Windows); the search and social hosts are the services' own domains.
 * The class boundaries are our rule (common practice, no source).
 */
import { describe, expect, it } from "vitest";
// @ts-expect-error: plain JavaScript without type declarations
import { contextOf, deviceClass, referrerClass } from "../../client/src/core.js";

const UA = {
  iphone: "Mozilla/5.0 (iPhone; CPU iPhone OS 17_0 like Mac OS X) AppleWebKit/605.1.15 (KHTML, like Gecko) Version/17.0 Mobile/15E148 Safari/604.1",
  ipad: "Mozilla/5.0 (iPad; CPU OS 16_6 like Mac OS X) AppleWebKit/605.1.15 (KHTML, like Gecko) Version/16.6 Mobile/15E148 Safari/604.1",
  androidPhone: "Mozilla/5.0 (Linux; Android 14; Pixel 8) AppleWebKit/537.36 (KHTML, like Gecko) Chrome/120.0.0.0 Mobile Safari/537.36",
  androidTablet: "Mozilla/5.0 (Linux; Android 13; SM-X700) AppleWebKit/537.36 (KHTML, like Gecko) Chrome/120.0.0.0 Safari/537.36",
  ipadDesktopMode: "Mozilla/5.0 (Macintosh; Intel Mac OS X 10_15_7) AppleWebKit/605.1.15 (KHTML, like Gecko) Version/17.0 Safari/605.1.15",
  windows: "Mozilla/5.0 (Windows NT 10.0; Win64; x64; rv:121.0) Gecko/20100101 Firefox/121.0",
};

describe("deviceClass", () => {
  it("tells phones, tablets and desktops apart", () => {
    expect(deviceClass({ userAgent: UA.iphone })).toBe("phone");
    expect(deviceClass({ userAgent: UA.androidPhone })).toBe("phone");
    expect(deviceClass({ userAgent: UA.ipad })).toBe("tablet");
    expect(deviceClass({ userAgent: UA.androidTablet })).toBe("tablet");
    expect(deviceClass({ userAgent: UA.ipadDesktopMode, maxTouchPoints: 5 })).toBe("tablet");
    expect(deviceClass({ userAgent: UA.ipadDesktopMode, maxTouchPoints: 0 })).toBe("desktop");
    expect(deviceClass({ userAgent: UA.windows })).toBe("desktop");
    expect(deviceClass({ userAgent: UA.windows, userAgentData: { mobile: true } })).toBe("phone");
    expect(deviceClass({})).toBe("desktop");
  });
});

describe("referrerClass", () => {
  it("classes the referring host", () => {
    expect(referrerClass("https://www.google.com/", "shop.example")).toBe("search");
    expect(referrerClass("https://www.google.co.uk/search?q=x", "shop.example")).toBe("search");
    expect(referrerClass("https://duckduckgo.com/", "shop.example")).toBe("search");
    expect(referrerClass("https://search.brave.com/search?q=a", "shop.example")).toBe("search");
    expect(referrerClass("https://l.facebook.com/l.php", "shop.example")).toBe("social");
    expect(referrerClass("https://t.co/abc", "shop.example")).toBe("social");
    expect(referrerClass("https://www.linkedin.com/", "shop.example")).toBe("social");
    expect(referrerClass("", "shop.example")).toBe("direct");
    expect(referrerClass("https://shop.example/pricing", "shop.example")).toBe("direct");
    expect(referrerClass("https://blog.example.org/post", "shop.example")).toBe("other");
    expect(referrerClass("https://notgoogle.example/", "shop.example")).toBe("other");
    expect(referrerClass("not a url", "shop.example")).toBe("other");
  });
});

describe("contextOf", () => {
  it("sends only the names the page chose: the address (name, then utm_name), the device and the referrer class", () => {
    const location = { search: "?utm_source=Newsletter&campaign=Spring%20Sale&utm_campaign=ignored&utm_term=", hostname: "shop.example" };
    expect(contextOf(["source", "campaign", "utm_term", "device", "referrer", "absent"], location, "https://www.bing.com/", { userAgent: UA.iphone }))
      .toEqual({ source: "Newsletter", campaign: "Spring Sale", utm_term: "", device: "phone", referrer: "search" });
    expect(contextOf([], location, "", {})).toEqual({});
  });
});
