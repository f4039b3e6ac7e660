/**
 * The express 5 application: /healthz, /readyz, the JSON API under /api/v1 (admin routes behind
 * the Bearer token; the public pick and outcome routes behind X-Page-Key, with CORS), the admin
 * console's static files at /, and the error mapping. Routes only validate, call one service and
 * shape the answer.
 */
import express, { type Request, type Response } from "express";
import { existsSync } from "node:fs";
import { join } from "node:path";
import { fail } from "../errors.ts";
import type { Services } from "../service/index.ts";
import { entityTag } from "../service/pageVersion.ts";
import { publicCors } from "./auth.ts";
import { errorHandler } from "./errors.ts";
import { requireDecodablePath, requireUsableText } from "./inputText.ts";
import { securityHeaders } from "./securityHeaders.ts";
import { ADMIN_TOKEN_BRAKE, braked, checkPage, TokenBuckets, UNKNOWN_PAGE_BRAKE } from "./rateLimit.ts";
import { clientRoutes, snippetRoute } from "./clientRoutes.ts";
import {
  createPageSchema, definitionCheckSchema, demoTrafficSchema, exportQuerySchema, outcomeSchema, pageKeySchema, parse,
  patchPageSchema, pickSchema,
} from "./validation.ts";

export interface AppOptions {
  /** folder of the built console (web/dist); served at / when it exists */
  webDir?: string | null;
  adminBodyLimit?: string;
  publicBodyLimit?: string;
  /** rate limits on the public routes and the wrong-token brake (default true; test suites turn them off) */
  rateLimits?: boolean;
  /** express's `trust proxy` (FACETWISE_TRUST_PROXY): which proxies' X-Forwarded-For names the client */
  trustProxy?: string;
}

const pageKey = (req: Request): string => parse(pageKeySchema, req.params.key, "key");

/**
 * The page's public key: the X-Page-Key header, or `?pageKey=` for navigator.sendBeacon, which
 * cannot set headers (the key is not a secret: it ships in the landing page's HTML anyway).
 */
const publicKeyOf = (req: Request): string | undefined =>
  req.get("x-page-key") ?? (typeof req.query.pageKey === "string" ? req.query.pageKey : undefined);

export function createApp(services: Services, options: AppOptions = {}): express.Express {
  const adminLimit = options.adminBodyLimit ?? "1mb";
  const publicLimit = options.publicBodyLimit ?? "16kb";
  const app = express();
  app.disable("x-powered-by");
  if (options.trustProxy) app.set("trust proxy", options.trustProxy);
  const buckets = options.rateLimits === false ? null : new TokenBuckets();
  /** The public routes' limits: the brake on unknown page keys, then the page's own limits. */
  const limitPublic = async (req: Request, key: string) => {
    if (!buckets) return;
    const page = await braked(buckets, req, UNKNOWN_PAGE_BRAKE, () => services.serving.get(key));
    checkPage(buckets, req, key, page.settings);
  };
  const checkAdmin = (req: Request) => services.auth.requireAdmin(req.get("authorization"));
  app.set("etag", false);
  app.use(securityHeaders);
  app.use(requireDecodablePath);

  app.get("/healthz", (_req, res) => {
    res.json({ ok: true });
  });
  app.get("/readyz", async (_req, res) => {
    const readiness = await services.ready();
    res.status(readiness.ready ? 200 : 503).json({ ready: readiness.ready, detail: readiness.detail });
  });

  // Public routes: landing pages on other origins. text/plain is parsed too, so
  // navigator.sendBeacon (which cannot set application/json) works for outcomes.
  const publicApi = express.Router();
  publicApi.use(publicCors);
  publicApi.use(express.json({ limit: publicLimit, type: ["application/json", "text/plain"], strict: true }));
  publicApi.use(requireUsableText);
  publicApi.post("/pages/:key/picks", async (req, res) => {
    const key = pageKey(req);
    await limitPublic(req, key);
    const body = parse(pickSchema, req.body);
    res.json(await services.picks.pick(key, publicKeyOf(req), body));
  });
  publicApi.post("/pages/:key/outcomes", async (req, res) => {
    const key = pageKey(req);
    await limitPublic(req, key);
    const body = parse(outcomeSchema, req.body);
    res.status(202).json(await services.outcomes.record(key, publicKeyOf(req), body));
  });
  app.use("/api", (_req, res, next) => {
    // answers depend on live state and may carry keys: never cached
    res.set("Cache-Control", "no-store");
    next();
  });
  app.use("/api/v1", (req, res, next) => {
    // route public paths (incl. their CORS preflight) to the public router only
    if (/^\/pages\/[^/]+\/(picks|outcomes)\/?$/.test(req.path)) return publicApi(req, res, next);
    next();
  });

  const admin = express.Router();
  admin.use(async (req, _res, next) => {
    await (buckets ? braked(buckets, req, ADMIN_TOKEN_BRAKE, () => checkAdmin(req)) : checkAdmin(req));
    next();
  });
  admin.use(express.json({ limit: adminLimit, strict: true }));
  admin.use(requireUsableText);
  admin.get("/session", (_req, res) => {
    res.json({ ok: true, scope: "admin", demoPage: services.demoPageKey, defaultSettings: services.defaultSettings });
  });
  admin.post("/definitions/check", async (req, res) => {
    res.json(await services.pages.checkDefinition(parse(definitionCheckSchema, req.body)));
  });
  admin.post("/pages", async (req, res) => {
    const page = await services.pages.create(parse(createPageSchema, req.body));
    res.status(201).json(page);
  });
  admin.get("/pages", async (_req, res) => {
    res.json({ pages: await services.pages.list() });
  });
  // optimistic concurrency: GET and PATCH answer an ETag; a PATCH with If-Match applies only to that version
  admin.get("/pages/:key", async (req, res) => {
    const { page, version } = await services.pages.read(pageKey(req));
    res.set("ETag", entityTag(version)).json(page);
  });
  admin.patch("/pages/:key", async (req, res) => {
    const key = pageKey(req);
    const { version, ...result } = await services.pages.patch(key, parse(patchPageSchema, req.body), req.get("if-match"));
    res.set("ETag", entityTag(version)).json(result);
  });
  admin.get("/pages/:key/report", async (req, res) => {
    const key = pageKey(req);
    // raw context values and what normalisation made of them (src/service/normalizeContext.ts)
    res.json({ ...(await services.reports.report(key)), contextValues: services.picks.contexts.recent(key) });
  });
  admin.get("/pages/:key/export", async (req, res) => {
    const key = pageKey(req);
    const { format } = parse(exportQuerySchema, req.query, "query");
    if (format === "csv") {
      res.type("text/csv; charset=utf-8").set("Content-Disposition", `attachment; filename="${key}.csv"`).send(await services.exports.csv(key));
    } else {
      res.json(await services.exports.json(key));
    }
  });
  admin.post("/pages/:key/demo-traffic", async (req, res) => {
    const key = pageKey(req);
    const { visitors } = parse(demoTrafficSchema, req.body);
    res.status(202).json(await services.demo.start(key, visitors));
  });
  admin.use(snippetRoute(services));
  app.use("/api/v1", admin);

  app.use("/api", (req: Request) => {
    throw fail("NOT_FOUND", { method: req.method, path: req.originalUrl.split("?")[0] });
  });

  // the landing-page client, the demo landing page and its images
  app.use(clientRoutes(services));

  const webDir = options.webDir;
  if (webDir && existsSync(join(webDir, "index.html"))) {
    app.use(express.static(webDir, { index: "index.html", fallthrough: true }));
  }
  app.use((req: Request, res: Response) => {
    res.status(404).json({ error: fail("NOT_FOUND", { method: req.method, path: req.path }).toJSON() });
  });
  app.use(errorHandler(adminLimit));
  return app;
}
