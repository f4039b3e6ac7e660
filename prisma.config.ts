/**
 * Prisma CLI configuration. `engine: "js"` with the pg driver adapter keeps `prisma generate`
 * (run by scripts/postinstall.mjs) entirely on npm packages: no native engine is downloaded.
 * Migrations are NOT run through Prisma Migrate (it fails on PostgreSQL's `name` type through the
 * pg adapter); they are our SQL files applied by src/store/migrator.ts (`facetwise migrate`).
 */
import { defineConfig } from "prisma/config";
import { PrismaPg } from "@prisma/adapter-pg";

export default defineConfig({
  schema: "prisma/schema.prisma",
  experimental: { adapter: true },
  engine: "js",
  // Only used by Prisma CLI commands that connect; generate never does.
  adapter: async () => new PrismaPg({ connectionString: process.env.DATABASE_URL }),
});
