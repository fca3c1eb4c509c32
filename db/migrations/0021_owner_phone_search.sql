-- hand-written: patient search matches owners by name OR phone; without a trigram index on phone the OR
-- cannot use the name index either, so every search read every owner (64 ms at 10,000 owners).
CREATE INDEX IF NOT EXISTS "owners_phone_trgm_idx" ON "owners" USING gin ("phone" gin_trgm_ops);
