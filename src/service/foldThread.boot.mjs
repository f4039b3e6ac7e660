// Worker entry for foldThread.ts: a worker thread does not inherit tsx's loader, so it registers
// tsx itself before loading the TypeScript body.
import { register } from "tsx/esm/api";

register();
await import("./foldThread.worker.ts");
