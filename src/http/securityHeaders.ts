/**
 * Security headers on every response (the console, its assets and the API): a strict
 * Content-Security-Policy — scripts, styles and connections from our own origin only, no inline
 * script or style, no plugins, no framing (CSP Level 3, W3C: `frame-ancestors 'none'`) — plus
 * `X-Frame-Options: DENY` for browsers without CSP, `X-Content-Type-Options: nosniff` (WHATWG
 * Fetch §X-Content-Type-Options), and `Referrer-Policy: no-referrer` (W3C Referrer Policy), as the
 * OWASP HTTP Headers Cheat Sheet recommends. Setting `element.style.x` from a script (the
 * console's colour swatches and bars) is allowed by `style-src 'self'`; only inline `<style>`,
 * `style="…"` attributes and inline scripts are refused.
 */
import type { NextFunction, Request, Response } from "express";

export const CONTENT_SECURITY_POLICY = [
  "default-src 'none'",
  "script-src 'self'",
  "style-src 'self'",
  "img-src 'self' data:",
  "connect-src 'self'",
  "font-src 'self'",
  "manifest-src 'self'",
  "base-uri 'none'",
  "form-action 'self'",
  "frame-ancestors 'none'",
].join("; ");

export function securityHeaders(_req: Request, res: Response, next: NextFunction): void {
  res.set({
    "Content-Security-Policy": CONTENT_SECURITY_POLICY,
    "X-Content-Type-Options": "nosniff",
    "X-Frame-Options": "DENY",
    "Referrer-Policy": "no-referrer",
    "Cross-Origin-Opener-Policy": "same-origin",
  });
  next();
}
