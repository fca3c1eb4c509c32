-- Custom SQL migration file, put your code below! --
-- hand-written
-- The built-in CRP protocol gains its measurement step (25 s): the due time left it out and was 20–35 s
-- early. Only protocols still exactly as installed are changed; a clinic's own edits are left alone.
-- Open runs started with those stages (copied at start) gain the step too, and their due time moves 25 s.
UPDATE "lab_orders"
SET "due_at" = "due_at" + interval '25 seconds',
    "stages" = "stages" || '[{"key":"measure","label":"Measurement","seconds":25}]'::jsonb
WHERE "status" = 'open' AND "analyte" = 'cCRP'
  AND "stages" = '[{"key":"mix","label":"Mixing","seconds":30,"handsOn":true},{"key":"reinsert","label":"Re-insert the cartridge","seconds":10,"maxSeconds":10,"handsOn":true},{"key":"incubate","label":"Incubation","seconds":660}]'::jsonb;--> statement-breakpoint
UPDATE "run_protocols"
SET "stages" = "stages" || '[{"key":"measure","label":"Measurement","seconds":25}]'::jsonb
WHERE "analyte" = 'cCRP'
  AND "stages" = '[{"key":"mix","label":"Mixing","seconds":30,"handsOn":true},{"key":"reinsert","label":"Re-insert the cartridge","seconds":10,"maxSeconds":10,"handsOn":true},{"key":"incubate","label":"Incubation","seconds":660}]'::jsonb;
