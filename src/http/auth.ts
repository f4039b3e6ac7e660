/** Express middleware for the two kinds of caller: the admin (Bearer token) and landing pages (X-Page-Key, checked by the services). */
import type { NextFunction, Request, Response } from "express";
import type { AuthService } from "../service/auth.ts";

export function requireAdmin(auth: AuthService) {
  return async (req: Request, _res: Response, next: NextFunction) => {
    await auth.requireAdmin(req.get("authorization"));
    next();
  };
}

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
