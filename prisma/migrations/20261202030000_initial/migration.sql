-- Initial schema. Generated from prisma/schema.prisma with
--   prisma migrate diff --from-empty --to-schema-datamodel prisma/schema.prisma --script
-- (minus its CREATE SCHEMA line: tables go to the connection's current schema).
-- Applied by src/store/migrator.ts; never edit after it has been applied anywhere.

-- CreateTable
CREATE TABLE "page" (
    "id" SERIAL NOT NULL,
    "key" TEXT NOT NULL,
    "name" TEXT NOT NULL,
    "public_key" TEXT NOT NULL,
    "status" TEXT NOT NULL DEFAULT 'active',
    "segment_by" TEXT[],
    "interactions" JSONB,
    "settings" JSONB NOT NULL,
    "baseline" TEXT NOT NULL,
    "model_version" INTEGER NOT NULL DEFAULT 0,
    "last_fold_at" TIMESTAMPTZ(3),
    "created_at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "updated_at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "page_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "factor" (
    "id" SERIAL NOT NULL,
    "page_id" INTEGER NOT NULL,
    "name" TEXT NOT NULL,
    "position" INTEGER NOT NULL,

    CONSTRAINT "factor_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "level" (
    "id" SERIAL NOT NULL,
    "factor_id" INTEGER NOT NULL,
    "name" TEXT NOT NULL,
    "value" TEXT NOT NULL DEFAULT '',
    "position" INTEGER NOT NULL,

    CONSTRAINT "level_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "exclusion_rule" (
    "id" SERIAL NOT NULL,
    "page_id" INTEGER NOT NULL,
    "rule" JSONB NOT NULL,

    CONSTRAINT "exclusion_rule_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "segment" (
    "id" SERIAL NOT NULL,
    "page_id" INTEGER NOT NULL,
    "key" TEXT NOT NULL,
    "context" JSONB NOT NULL,
    "created_at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "segment_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "pick" (
    "id" UUID NOT NULL,
    "page_id" INTEGER NOT NULL,
    "visitor" TEXT NOT NULL,
    "segment_id" INTEGER,
    "combination" TEXT NOT NULL,
    "propensity" DOUBLE PRECISION NOT NULL,
    "model_version" INTEGER NOT NULL,
    "created_at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,
    "expires_at" TIMESTAMPTZ(3) NOT NULL,
    "window_ends_at" TIMESTAMPTZ(3) NOT NULL,
    "converted_at" TIMESTAMPTZ(3),
    "state" TEXT NOT NULL DEFAULT 'open',
    "folded_version" INTEGER,

    CONSTRAINT "pick_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "assignment" (
    "page_id" INTEGER NOT NULL,
    "visitor" TEXT NOT NULL,
    "pick_id" UUID NOT NULL,
    "expires_at" TIMESTAMPTZ(3) NOT NULL,

    CONSTRAINT "assignment_pkey" PRIMARY KEY ("page_id","visitor")
);

-- CreateTable
CREATE TABLE "outcome" (
    "id" SERIAL NOT NULL,
    "page_id" INTEGER NOT NULL,
    "pick_id" UUID NOT NULL,
    "event" TEXT NOT NULL,
    "value" DOUBLE PRECISION,
    "created_at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "outcome_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "posterior_snapshot" (
    "id" SERIAL NOT NULL,
    "page_id" INTEGER NOT NULL,
    "version" INTEGER NOT NULL,
    "state" JSONB NOT NULL,
    "summary" JSONB NOT NULL,
    "created_at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "posterior_snapshot_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "allocation_record" (
    "id" SERIAL NOT NULL,
    "page_id" INTEGER NOT NULL,
    "version" INTEGER NOT NULL,
    "segment" TEXT NOT NULL,
    "allocation" JSONB NOT NULL,
    "created_at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "allocation_record_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "retired_combination" (
    "id" SERIAL NOT NULL,
    "page_id" INTEGER NOT NULL,
    "segment" TEXT NOT NULL,
    "combination" TEXT NOT NULL,
    "reason" TEXT NOT NULL,
    "figures" JSONB NOT NULL,
    "retired_at" TIMESTAMPTZ(3) NOT NULL,
    "reinstated_at" TIMESTAMPTZ(3),

    CONSTRAINT "retired_combination_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "api_key" (
    "id" SERIAL NOT NULL,
    "page_id" INTEGER,
    "scope" TEXT NOT NULL,
    "hash" TEXT NOT NULL,
    "prefix" TEXT NOT NULL,
    "created_at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "api_key_pkey" PRIMARY KEY ("id")
);

-- CreateTable
CREATE TABLE "fold_log" (
    "id" SERIAL NOT NULL,
    "page_id" INTEGER NOT NULL,
    "version" INTEGER NOT NULL,
    "picks" INTEGER NOT NULL,
    "millis" DOUBLE PRECISION NOT NULL,
    "created_at" TIMESTAMPTZ(3) NOT NULL DEFAULT CURRENT_TIMESTAMP,

    CONSTRAINT "fold_log_pkey" PRIMARY KEY ("id")
);

-- CreateIndex
CREATE UNIQUE INDEX "page_key_key" ON "page"("key");

-- CreateIndex
CREATE UNIQUE INDEX "page_public_key_key" ON "page"("public_key");

-- CreateIndex
CREATE UNIQUE INDEX "factor_page_id_name_key" ON "factor"("page_id", "name");

-- CreateIndex
CREATE UNIQUE INDEX "level_factor_id_name_key" ON "level"("factor_id", "name");

-- CreateIndex
CREATE UNIQUE INDEX "segment_page_id_key_key" ON "segment"("page_id", "key");

-- CreateIndex
CREATE INDEX "pick_page_id_visitor_expires_at_idx" ON "pick"("page_id", "visitor", "expires_at");

-- CreateIndex
CREATE INDEX "pick_page_id_state_window_ends_at_idx" ON "pick"("page_id", "state", "window_ends_at");

-- CreateIndex
CREATE UNIQUE INDEX "outcome_page_id_event_key" ON "outcome"("page_id", "event");

-- CreateIndex
CREATE UNIQUE INDEX "posterior_snapshot_page_id_version_key" ON "posterior_snapshot"("page_id", "version");

-- CreateIndex
CREATE UNIQUE INDEX "allocation_record_page_id_version_segment_key" ON "allocation_record"("page_id", "version", "segment");

-- CreateIndex
CREATE INDEX "retired_combination_page_id_segment_idx" ON "retired_combination"("page_id", "segment");

-- CreateIndex
CREATE UNIQUE INDEX "api_key_hash_key" ON "api_key"("hash");

-- CreateIndex
CREATE INDEX "fold_log_page_id_created_at_idx" ON "fold_log"("page_id", "created_at");

-- AddForeignKey
ALTER TABLE "factor" ADD CONSTRAINT "factor_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "level" ADD CONSTRAINT "level_factor_id_fkey" FOREIGN KEY ("factor_id") REFERENCES "factor"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "exclusion_rule" ADD CONSTRAINT "exclusion_rule_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "segment" ADD CONSTRAINT "segment_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "pick" ADD CONSTRAINT "pick_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "pick" ADD CONSTRAINT "pick_segment_id_fkey" FOREIGN KEY ("segment_id") REFERENCES "segment"("id") ON DELETE SET NULL ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "assignment" ADD CONSTRAINT "assignment_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "outcome" ADD CONSTRAINT "outcome_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "outcome" ADD CONSTRAINT "outcome_pick_id_fkey" FOREIGN KEY ("pick_id") REFERENCES "pick"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "posterior_snapshot" ADD CONSTRAINT "posterior_snapshot_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "allocation_record" ADD CONSTRAINT "allocation_record_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "retired_combination" ADD CONSTRAINT "retired_combination_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "api_key" ADD CONSTRAINT "api_key_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

-- AddForeignKey
ALTER TABLE "fold_log" ADD CONSTRAINT "fold_log_page_id_fkey" FOREIGN KEY ("page_id") REFERENCES "page"("id") ON DELETE CASCADE ON UPDATE CASCADE;

