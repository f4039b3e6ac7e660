/** CORS for landing pages (X-Page-Key, checked by the services); the admin check is in app.ts with its brake (rateLimit.ts). */
import type { NextFunction, Request, Response } from "express";

/**
 * Landing pages call the public routes from their own origins. Only POST and the X-Page-Key
 * header are allowed, and no credentials: the responses carry nothing but the visitor's pick.
 */
export function publicCors(req: Request, res: Response, next: NextFunction): void {
  res.set("Access-Control-Allow-Origin", "*");
  res.set("Vary", "Origin");
  if (req.method === "OPTIONS") {
    res.set("Access-Control-Allow-Methods", "POST, OPTIONS");
    res.set("Access-Control-Allow-Headers", "Content-Type, X-Page-Key");
    res.set("Access-Control-Max-Age", "600");
    res.status(204).end();
    return;
  }
  next();
}
