-- Hand-written: frames is partitioned and kept out of drizzle-kit's schema (see src/lib/server/db/frames.ts).
-- How many estimates nees_mean averages, so stored rows can be re-averaged into a run figure.
ALTER TABLE "frames" ADD COLUMN "nees_count" integer;
--> statement-breakpoint
-- One row per run whose metric columns are being (or were last) recomputed after a settings change.
-- `version` grows with every settings save; a job that finds a newer version stops and leaves the run to it.
CREATE TABLE "metric_recomputes" (
	"run_id" uuid PRIMARY KEY NOT NULL REFERENCES "runs"("id") ON DELETE CASCADE,
	"version" integer NOT NULL DEFAULT 1,
	"state" text NOT NULL DEFAULT 'queued' CHECK ("state" IN ('queued', 'running', 'done', 'failed')),
	"progress" real NOT NULL DEFAULT 0,
	"error" text,
	"settings_saved_at" timestamp with time zone NOT NULL DEFAULT now(),
	"updated_at" timestamp with time zone NOT NULL DEFAULT now()
);
