/**
 * A worker thread for the engine's foldCycle. A fold costs from tens of milliseconds to seconds
 * (posterior samples × segments × combinations); computed on the main thread it would stall every
 * pick in the process for that long. One thread, started on first use and restarted if it dies;
 * inputs and outputs cross by structured clone (plain objects, Maps and typed arrays).
 */
import { Worker } from "node:worker_threads";
import type { FoldCycleInput, FoldCycleOutput } from "../model/index.ts";
import { receiveError, tsWorker, type SentError } from "../worker.ts";

interface Pending { resolve(output: FoldCycleOutput): void; reject(error: unknown): void }

export class FoldThread {
  private worker: Worker | null = null;
  private readonly pending = new Map<number, Pending>();
  private next = 0;

  run(input: FoldCycleInput): Promise<FoldCycleOutput> {
    const worker = this.worker ?? this.start();
    const id = ++this.next;
    return new Promise<FoldCycleOutput>((resolve, reject) => {
      this.pending.set(id, { resolve, reject });
      worker.postMessage({ id, input });
    });
  }

  private start(): Worker {
    const worker = tsWorker(new URL("./foldThread.worker.ts", import.meta.url));
    worker.unref();
    worker.on("message", (message: { id: number; output?: FoldCycleOutput; error?: SentError }) => {
      const waiting = this.pending.get(message.id);
      if (!waiting) return;
      this.pending.delete(message.id);
      if (message.output) return waiting.resolve(message.output);
      waiting.reject(receiveError(message.error ?? { message: "fold failed" }));
    });
    const fail = (error: unknown) => {
      if (this.worker === worker) this.worker = null;
      for (const waiting of this.pending.values()) waiting.reject(error);
      this.pending.clear();
    };
    worker.on("error", fail);
    worker.on("exit", (code) => fail(new Error(`the fold thread exited (code ${code})`)));
    this.worker = worker;
    return worker;
  }

  async stop(): Promise<void> {
    const worker = this.worker;
    this.worker = null;
    await worker?.terminate();
  }
}
