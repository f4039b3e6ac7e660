/**
 * The `facetwise` command. Each subcommand is a module in src/commands/ exporting
 * `summary`, `help` and `run(argv) → exit code`; it is loaded on demand so `facetwise plan`
 * never loads the database driver. Errors end the process with one clear line and exit 1.
 */
import { FacetwiseError } from "./errors.ts";

export interface CommandModule {
  summary: string;
  help: string;
  run(argv: string[]): Promise<number>;
}

const commands: Record<string, () => Promise<CommandModule>> = {
  start: () => import("./commands/start.ts"),
  migrate: () => import("./commands/migrate.ts"),
  export: () => import("./commands/export.ts"),
  simulate: () => import("./commands/simulate.ts"),
  plan: () => import("./commands/plan.ts"),
  bench: () => import("./commands/bench.ts"),
};

async function usage(): Promise<string> {
  const lines = ["Usage: facetwise <command> [options]", "", "Commands:"];
  for (const [name, load] of Object.entries(commands)) {
    const summary = await load().then((m) => m.summary, () => "(unavailable)");
    lines.push(`  ${name.padEnd(10)} ${summary}`);
  }
  lines.push("", "Run `facetwise <command> --help` for a command's options.");
  return lines.join("\n");
}

async function main(argv: string[]): Promise<number> {
  const [name, ...rest] = argv;
  if (name === undefined || name === "--help" || name === "-h" || name === "help") {
    console.log(await usage());
    return name === undefined ? 1 : 0;
  }
  const load = commands[name];
  if (!load) {
    console.error(`facetwise: unknown command "${name}"; run \`facetwise --help\` for the list`);
    return 1;
  }
  const command = await load();
  if (rest.includes("--help") || rest.includes("-h")) {
    console.log(command.help);
    return 0;
  }
  return command.run(rest);
}

main(process.argv.slice(2)).then(
  (code) => {
    process.exitCode = code;
  },
  (error: unknown) => {
    const message = error instanceof FacetwiseError || error instanceof Error ? error.message : String(error);
    console.error(`facetwise: ${message}`);
    process.exitCode = 1;
  },
);
