// Builds the landing-page client into client/dist: v1.js (classic script, IIFE) and v1.mjs (ES
// module), minified by esbuild to ES2020 (browsers from 2020 on). The dist files are committed: facetwise
// serves them as they are and their SRI hash must not depend on the machine that built them.
// `npm run build:client` after editing client/src; test/client/build.test.ts checks they are current.
import { build } from "esbuild";
import { dirname, join } from "node:path";
import { fileURLToPath } from "node:url";

const here = dirname(fileURLToPath(import.meta.url));

export async function buildClient(write = true) {
  const common = { bundle: true, minify: true, target: "es2020", legalComments: "none", write };
  const [classic, module] = await Promise.all([
    build({ ...common, entryPoints: [join(here, "src", "classic.js")], format: "iife", outfile: join(here, "dist", "v1.js") }),
    build({ ...common, entryPoints: [join(here, "src", "module.js")], format: "esm", outfile: join(here, "dist", "v1.mjs") }),
  ]);
  return write ? null : { js: classic.outputFiles[0].text, mjs: module.outputFiles[0].text };
}

if (process.argv[1] === fileURLToPath(import.meta.url)) await buildClient();
