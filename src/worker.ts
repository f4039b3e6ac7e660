/**
 * Worker threads running our TypeScript, shared by the fold loop (src/service/foldThread.ts) and
 * the simulator (src/sim/harness.ts). On Node 20 a worker does not inherit the main thread's
 * loader hooks (and `execArgv: ["--import", "tsx"]` fails with ERR_UNKNOWN_FILE_EXTENSION for a
 * .ts entry), so the worker starts from a one-line bootstrap that loads the entry through tsx's
 * `tsImport`. Errors cross the thread boundary as plain data and come back as the same
 * FacetwiseError (code, params, field), so messages reach users unchanged.
 */
import { createRequire } from "node:module";
import { dirname, join } from "node:path";
import { pathToFileURL } from "node:url";
import { Worker } from "node:worker_threads";
import { FacetwiseError, type ErrorCode } from "./errors.ts";

/** A worker that imports `entry` (a .ts module URL) through tsx. */
export function tsWorker(entry: URL, workerData?: unknown): Worker {
  const tsxRoot = dirname(createRequire(import.meta.url).resolve("tsx/package.json"));
  const api = pathToFileURL(join(tsxRoot, "dist", "esm", "api", "index.mjs")).href;
  const code = `import(${JSON.stringify(api)}).then((tsx) => tsx.tsImport(${JSON.stringify(entry.href)}, ${JSON.stringify(entry.href)}))`;
  return new Worker(code, { eval: true, workerData });
}

/** An error as a worker posts it. */
export interface SentError {
  message: string;
  code?: string;
  params?: Record<string, string | number>;
  field?: string;
}

export function sendError(error: unknown): SentError {
  if (error instanceof FacetwiseError) return { message: error.message, code: error.code, params: error.params, field: error.field };
  return { message: error instanceof Error ? error.message : String(error) };
}

export function receiveError(sent: SentError): Error {
  return sent.code ? new FacetwiseError(sent.code as ErrorCode, sent.params, sent.field) : new Error(sent.message);
}
