/**
 * The comparison harness: runs a list of tasks (a scenario and a run seed each — R runs of one
 * scenario for `simulate`, R drawn scenarios for `plan`) in parallel on worker threads, one per
 * core, and returns the results in task order, so a report depends only on the seeds, never on
 * which thread finished first.
 * Workers load TypeScript through src/worker.ts.
 */
import { availableParallelism } from "node:os";
import { receiveError, tsWorker } from "../worker.ts";
import { runSimulation, type RunOptions, type RunResult } from "./runSimulation.ts";
import type { Scenario } from "./scenario.ts";
import { setup } from "./setup.ts";
import type { WorkerMessage } from "./simulationWorker.ts";

export interface Task {
  scenario: Scenario;
  seed: number;
}

export interface HarnessOptions extends Omit<RunOptions, "seed" | "onSlice"> {
  /** Worker threads; 1 runs in this thread. Default: the machine's cores, at most one per task. */
  threads?: number;
  /** Share of all the work done, in [0, 1]. */
  onProgress?: (done: number) => void;
}

/** Seed of run `run` for a command's seed: distinct, reproducible streams. */
export function runSeed(seed: number, run: number): number {
  return seed * 100_003 + run;
}

export async function runHarness(tasks: Task[], options: HarnessOptions): Promise<RunResult[]> {
  const { threads = Math.min(availableParallelism(), tasks.length), onProgress, ...runOptions } = options;
  const done = new Float64Array(tasks.length);
  const report = (index: number, fraction: number): void => {
    done[index] = fraction;
    onProgress?.(done.reduce((a, b) => a + b, 0) / tasks.length);
  };
  if (threads <= 1) {
    return tasks.map((task, index) =>
      runSimulation(setup(task.scenario), { ...runOptions, seed: task.seed, onSlice: (f) => report(index, f) }),
    );
  }
  const results: RunResult[] = new Array(tasks.length);
  let next = 0;
  let failed = false;
  await Promise.all(
    Array.from(
      { length: Math.min(threads, tasks.length) },
      () =>
        new Promise<void>((resolve, reject) => {
          const worker = tsWorker(new URL("./simulationWorker.ts", import.meta.url), runOptions);
          const feed = (): void => {
            if (next < tasks.length && !failed) {
              const index = next++;
              worker.postMessage({ index, task: tasks[index] });
            } else void worker.terminate().then(() => resolve());
          };
          worker.on("message", (message: WorkerMessage) => {
            if (message.type === "progress") report(message.index, message.done);
            else if (message.type === "result") {
              results[message.index] = message.result;
              feed();
            } else {
              failed = true;
              void worker.terminate();
              reject(receiveError(message.error));
            }
          });
          worker.on("error", (error) => {
            failed = true;
            reject(error);
          });
          worker.on("online", feed);
        }),
    ),
  );
  return results;
}
