ALTER TABLE "runs" ADD COLUMN "outcome" varchar(16);--> statement-breakpoint
ALTER TABLE "runs" ADD COLUMN "converged_by" varchar(16);--> statement-breakpoint
UPDATE "runs" SET "outcome" = CASE
  WHEN "result" ->> 'status' = 'stopped' AND "result" ->> 'reason' LIKE '%time budget%' THEN 'time-budget'
  WHEN "result" ->> 'status' = 'stopped' THEN 'iteration-limit'
  WHEN "result" ->> 'status' = 'converged' AND "result" ->> 'reason' LIKE 'no further decrease%' THEN 'stalled'
  ELSE "result" ->> 'status' END
WHERE "result" IS NOT NULL AND "result" ->> 'status' IS NOT NULL;
