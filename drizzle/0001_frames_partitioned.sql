-- Frames, range-partitioned by device time (one partition a day, created ahead and on demand).
-- Hand-written: drizzle-kit does not emit PARTITION BY.
CREATE TABLE "frames" (
	"run_id" uuid NOT NULL,
	"seq" bigint NOT NULL,
	"t" double precision NOT NULL,
	"ts" timestamp with time zone NOT NULL,
	"data" bytea NOT NULL,
	"n_measurements" integer,
	"n_estimates" integer,
	"n_truth" integer,
	"expected_cardinality" double precision,
	"gospa" double precision,
	"gospa_localization" double precision,
	"gospa_missed" integer,
	"gospa_false" integer,
	"ospa" double precision,
	"nees_mean" double precision,
	"zones" jsonb,
	PRIMARY KEY ("run_id", "seq", "ts")
) PARTITION BY RANGE ("ts");
--> statement-breakpoint
-- The packed sets are float-heavy MessagePack; PostgreSQL's default pglz compression costs far more
-- CPU than it saves on them, so they are stored uncompressed (measured in bench:ingest).
ALTER TABLE "frames" ALTER COLUMN "data" SET STORAGE EXTERNAL;
--> statement-breakpoint
CREATE INDEX "frames_run_t_idx" ON "frames" ("run_id", "t");
--> statement-breakpoint
-- Creates the day partition holding `at` when it does not exist yet; returns its name.
CREATE OR REPLACE FUNCTION skein_ensure_frames_partition(at timestamptz) RETURNS text
LANGUAGE plpgsql AS $$
DECLARE
	day_start timestamptz := date_trunc('day', at AT TIME ZONE 'UTC') AT TIME ZONE 'UTC';
	part text := 'frames_' || to_char(day_start AT TIME ZONE 'UTC', 'YYYYMMDD');
BEGIN
	IF to_regclass(part) IS NULL THEN
		BEGIN
			EXECUTE format(
				'CREATE TABLE %I PARTITION OF frames FOR VALUES FROM (%L) TO (%L)',
				part, day_start, day_start + interval '1 day'
			);
		EXCEPTION WHEN duplicate_table THEN
			NULL; -- created concurrently by another writer
		END;
	END IF;
	RETURN part;
END;
$$;
