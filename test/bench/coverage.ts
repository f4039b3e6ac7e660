/**
 * Coverage of the engine's 95% intervals on the three workloads of coverageExperiment.ts. Prints
 * figures; asserts nothing (the test suite checks a smaller run in test/model/coverage.test.ts).
 *
 *   npm run bench:coverage                       # 200 replications per workload
 *   npm run bench:coverage -- --replications 400 --seed 1000
 */
import { parseArgs } from "node:util";
import { coverage, describeCoverage, type Workload } from "./coverageExperiment.ts";

const { values } = parseArgs({ options: { replications: { type: "string", default: "200" }, seed: { type: "string", default: "1" }, workload: { type: "string" } } });
const replications = Number(values.replications);
const seed = Number(values.seed);
if (!(Number.isInteger(replications) && replications > 0) || !Number.isInteger(seed)) {
  console.error("--replications must be a positive whole number and --seed a whole number");
  process.exit(2);
}
const workloads: Workload[] = values.workload ? [values.workload as Workload] : ["prior", "shares", "interactions"];
for (const workload of workloads) {
  const started = performance.now();
  const c = coverage(workload, replications, seed);
  console.log(`${describeCoverage(c)}  (${replications} replications, ${((performance.now() - started) / 1000).toFixed(1)} s)`);
}
