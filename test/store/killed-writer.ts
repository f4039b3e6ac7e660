/**
 * Child process for the durability test in database.test.ts: opens the embedded database in the
 * folder given as argv[2], writes one page, reports its id once the write is acknowledged, then
 * idles until the test kills it with SIGKILL (no close, no flush).
 */
import { openDatabase } from "../../src/store/database.ts";

const db = await openDatabase({ dataDir: process.argv[2] });
const page = await db.prisma.page.create({
  data: { key: `killed-${process.pid}`, name: "written before SIGKILL", publicKey: `pk-${process.pid}`, settings: {}, baseline: "a=b" },
});
process.stdout.write(`acknowledged ${page.id}\n`);
setInterval(() => undefined, 60_000);
