-- No double booking of a provider, ever: two live appointments of one provider may not overlap.
-- Cancelled and no-show appointments free their slot. Half-open ranges: back-to-back is fine.
ALTER TABLE "appointments" ADD CONSTRAINT "appointments_no_provider_overlap"
  EXCLUDE USING gist ("provider_id" WITH =, tstzrange("starts_at", "ends_at", '[)') WITH &&)
  WHERE ("status" NOT IN ('cancelled', 'no_show'));
