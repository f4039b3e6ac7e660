/**
 * The built landing-page client (client/dist, committed; `npm run build:client` writes it) as the
 * server ships it: the bytes, their gzip form and the Subresource-Integrity value, SHA-384 in
 * base64 (W3C Subresource Integrity, section 3.1), computed from the very bytes served.
 */
import { createHash } from "node:crypto";
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { gzipSync } from "node:zlib";

export interface ClientAsset { body: Buffer; gzip: Buffer; integrity: string }
export interface ClientAssets { classic: ClientAsset; module: ClientAsset }

export const CLIENT_DIR = join(import.meta.dirname, "..", "..", "client", "dist");

export function integrityOf(bytes: Buffer | string): string {
  return `sha384-${createHash("sha384").update(bytes).digest("base64")}`;
}

function asset(file: string): ClientAsset {
  const body = readFileSync(join(CLIENT_DIR, file));
  return { body, gzip: gzipSync(body, { level: 9 }), integrity: integrityOf(body) };
}

let loaded: ClientAssets | undefined;

/** Read once per process: the files do not change while the server runs. */
export function clientAssets(): ClientAssets {
  loaded ??= { classic: asset("v1.js"), module: asset("v1.mjs") };
  return loaded;
}
