-- Reviews are part of the record: a correction is a new comment, never an edit.
CREATE OR REPLACE FUNCTION result_reviews_refuse_change() RETURNS trigger AS $$
BEGIN
  RAISE EXCEPTION 'result_reviews is append-only (% refused)', TG_OP;
END;
$$ LANGUAGE plpgsql;
--> statement-breakpoint
CREATE TRIGGER result_reviews_append_only
  BEFORE UPDATE OR DELETE ON result_reviews
  FOR EACH ROW EXECUTE FUNCTION result_reviews_refuse_change();
