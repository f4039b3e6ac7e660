/**
 * The fold thread's body: runs the engine's foldCycle on the inputs it is sent and posts the
 * result back, so the main thread keeps answering picks while a fold computes.
 */
import { parentPort } from "node:worker_threads";
import { foldCycle, type FoldCycleInput } from "../model/index.ts";
import { sendError } from "../worker.ts";

parentPort!.on("message", (message: { id: number; input: FoldCycleInput }) => {
  try {
    parentPort!.postMessage({ id: message.id, output: foldCycle(message.input) });
  } catch (error) {
    parentPort!.postMessage({ id: message.id, error: sendError(error) });
  }
});
