-- The two ends of a line are named "input" (transmitter end) and "load" (antenna end) across the API
-- since 0.2.0; sweeps stored before then keep their meaning under the new names.
UPDATE "sweeps" SET "direction" = 'inputToLoad' WHERE "direction" = 'sourceToLoad';--> statement-breakpoint
UPDATE "sweeps" SET "direction" = 'loadToInput' WHERE "direction" = 'loadToSource';
