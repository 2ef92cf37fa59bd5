-- The moves an order may make; the trigger below refuses every other change of state.
INSERT INTO "order_transitions" ("kind", "from_state", "to_state") VALUES
  ('spectacles', 'draft', 'sent_to_lab'), ('spectacles', 'draft', 'cancelled'),
  ('spectacles', 'sent_to_lab', 'received'), ('spectacles', 'sent_to_lab', 'cancelled'),
  ('spectacles', 'received', 'checked'), ('spectacles', 'received', 'remake'), ('spectacles', 'received', 'cancelled'),
  ('spectacles', 'checked', 'ready_to_collect'), ('spectacles', 'checked', 'remake'), ('spectacles', 'checked', 'cancelled'),
  ('spectacles', 'remake', 'sent_to_lab'), ('spectacles', 'remake', 'cancelled'),
  ('spectacles', 'ready_to_collect', 'collected'), ('spectacles', 'ready_to_collect', 'remake'),
  ('contact_lenses', 'draft', 'sent_to_lab'), ('contact_lenses', 'draft', 'cancelled'),
  ('contact_lenses', 'sent_to_lab', 'received'), ('contact_lenses', 'sent_to_lab', 'cancelled'),
  ('contact_lenses', 'received', 'ready_to_collect'), ('contact_lenses', 'received', 'remake'), ('contact_lenses', 'received', 'cancelled'),
  ('contact_lenses', 'remake', 'sent_to_lab'), ('contact_lenses', 'remake', 'cancelled'),
  ('contact_lenses', 'ready_to_collect', 'collected');
--> statement-breakpoint
CREATE FUNCTION "optical_orders_guard_state"() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
  IF TG_OP = 'INSERT' THEN
    IF NEW.state <> 'draft' THEN
      RAISE EXCEPTION 'an order starts as a draft, not %', NEW.state USING ERRCODE = 'check_violation', CONSTRAINT = 'optical_orders_state_transition';
    END IF;
    RETURN NEW;
  END IF;
  IF NEW.kind <> OLD.kind THEN
    RAISE EXCEPTION 'an order cannot change kind' USING ERRCODE = 'check_violation', CONSTRAINT = 'optical_orders_state_transition';
  END IF;
  IF NEW.state IS DISTINCT FROM OLD.state THEN
    IF NOT EXISTS (SELECT 1 FROM order_transitions t WHERE t.kind = NEW.kind AND t.from_state = OLD.state AND t.to_state = NEW.state) THEN
      RAISE EXCEPTION 'an order cannot go from % to %', OLD.state, NEW.state USING ERRCODE = 'check_violation', CONSTRAINT = 'optical_orders_state_transition';
    END IF;
    NEW.state_changed_at := now();
  END IF;
  RETURN NEW;
END;
$$;
--> statement-breakpoint
CREATE TRIGGER "optical_orders_state_guard" BEFORE INSERT OR UPDATE ON "optical_orders" FOR EACH ROW EXECUTE FUNCTION "optical_orders_guard_state"();
