/**
 * Worker-thread entry for the harness: runs the tasks the main thread sends (a scenario and a
 * seed each), posting progress and each run's result back. The setup of the last scenario seen is
 * kept, so R runs of one scenario build it once.
 */
import { parentPort, workerData } from "node:worker_threads";
import type { Task } from "./harness.ts";
import { runSimulation, type RunOptions } from "./runSimulation.ts";
import { setup, type Setup } from "./setup.ts";
import { sendError, type SentError } from "../worker.ts";

export type WorkerMessage =
  | { type: "progress"; index: number; done: number }
  | { type: "result"; index: number; result: ReturnType<typeof runSimulation> }
  | { type: "error"; index: number; error: SentError };

const options = workerData as Omit<RunOptions, "seed" | "onSlice">;
const port = parentPort!;
let cached: { scenario: Task["scenario"]; setup: Setup } | null = null;

port.on("message", ({ index, task }: { index: number; task: Task }) => {
  try {
    if (cached === null || JSON.stringify(cached.scenario) !== JSON.stringify(task.scenario)) {
      cached = { scenario: task.scenario, setup: setup(task.scenario) };
    }
    const result = runSimulation(cached.setup, {
      ...options,
      seed: task.seed,
      onSlice: (done) => port.postMessage({ type: "progress", index, done } satisfies WorkerMessage),
    });
    port.postMessage({ type: "result", index, result } satisfies WorkerMessage);
  } catch (error) {
    port.postMessage({ type: "error", index, error: sendError(error) } satisfies WorkerMessage);
  }
});
