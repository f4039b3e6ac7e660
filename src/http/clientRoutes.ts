/**
 * The landing-page client's routes: the client itself (/client/v1.js classic script, /client/v1.mjs
 * ES module: public, cacheable for a year and immutable — a change ships as v2 — gzip when the
 * browser accepts it, readable cross-origin for SRI), the admin snippet route, and the demo
 * landing page with its images. Routes only translate HTTP; the services build the content.
 */
import express, { type Request, type Response } from "express";
import { fail } from "../errors.ts";
import type { Services } from "../service/index.ts";
import { clientAssets, type ClientAsset } from "../service/clientAssets.ts";
import { snippetOf, type SnippetOptions } from "../service/snippet.ts";
import { demoImages } from "../service/demoImages.ts";
import { demoLanding, demoThanks, THANKS_SCRIPT, type LandingPage } from "../service/demoLanding.ts";
import { pageKeySchema, parse, snippetQuerySchema } from "./validation.ts";

const YEAR = 365 * 24 * 3600;

function sendAsset(req: Request, res: Response, asset: ClientAsset): void {
  res.set({
    "Content-Type": "text/javascript; charset=utf-8",
    "Cache-Control": `public, max-age=${YEAR}, immutable`,
    "Access-Control-Allow-Origin": "*",
    "Cross-Origin-Resource-Policy": "cross-origin",
    // lets landing pages measure what the client costs them (Resource Timing sizes)
    "Timing-Allow-Origin": "*",
    "X-Content-Type-Options": "nosniff",
    Vary: "Accept-Encoding",
  });
  if (/\bgzip\b/.test(req.get("accept-encoding") ?? "")) res.set("Content-Encoding", "gzip").send(asset.gzip);
  else res.send(asset.body);
}

/** facetwise's own address as the browser reached it, for the snippet's script src. */
export const originOf = (req: Request): string => `${req.protocol}://${req.get("host")}`;

/** The snippet of a stored page: query options over the defaults (timeout 1000 ms, the page's segmentBy, consent). */
export async function pageSnippet(services: Services, key: string, query: unknown, origin: string, extra: Partial<SnippetOptions> = {}) {
  const page = await services.pages.stored(key);
  const q = parse(snippetQuerySchema, query, "query");
  const options: SnippetOptions = { timeout: q.timeout, context: q.context ?? page.segmentBy, consent: q.consent, ...extra };
  return snippetOf(page, origin, clientAssets().classic.integrity, options);
}

/** Public routes: the client files, the demo landing page and its images. */
export function clientRoutes(services: Services): express.Router {
  const router = express.Router();
  router.get("/client/v1.js", (req, res) => sendAsset(req, res, clientAssets().classic));
  router.get("/client/v1.mjs", (req, res) => sendAsset(req, res, clientAssets().module));

  const landing = async (req: Request, res: Response, build: (s: Awaited<ReturnType<typeof pageSnippet>>) => LandingPage, pick: boolean) => {
    if (!services.demoPageKey) throw fail("NOT_FOUND", { method: req.method, path: req.path });
    // the snippet's options may be tried in the address: /demo/landing?timeout=300
    const { html, csp } = build(await pageSnippet(services, services.demoPageKey, req.query, originOf(req), { pick }));
    res.set({ "Content-Type": "text/html; charset=utf-8", "Content-Security-Policy": csp, "Cache-Control": "no-store" }).send(html);
  };
  router.get("/demo/landing", (req, res) => landing(req, res, demoLanding, true));
  router.get("/demo/landing/thanks", (req, res) => landing(req, res, demoThanks, false));
  router.get("/demo/landing/thanks.js", (_req, res) => {
    res.type("text/javascript; charset=utf-8").set("Cache-Control", "no-cache").send(THANKS_SCRIPT);
  });
  router.get("/demo/:image", (req, res, next) => {
    const match = /^([a-z-]+)\.(svg|jpg)$/.exec(req.params.image);
    const svg = match && demoImages[match[1]];
    if (!svg) return next();
    // pages seeded before the images existed name them .jpg
    if (match[2] === "jpg") return res.redirect(301, `/demo/${match[1]}.svg`);
    res.type("image/svg+xml").set("Cache-Control", "public, max-age=86400").send(svg);
  });
  return router;
}

/** Admin: GET /pages/:key/snippet → { html, integrity, csp }, exactly what the console shows. */
export function snippetRoute(services: Services): express.Router {
  const router = express.Router();
  router.get("/pages/:key/snippet", async (req, res) => {
    const key = parse(pageKeySchema, req.params.key, "key");
    res.json(await pageSnippet(services, key, req.query, originOf(req)));
  });
  return router;
}
