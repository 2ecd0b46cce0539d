-- Reviews become signed, append-only history.
--
-- A review from now on is signed by the API key that made it (key_id; the browser session carries its key too),
-- never by a name the request gives. Its subject is one finding, one cue (attribute=value) or the audit's verdict
-- (an override, with the verdict it asks for). `supersedes` links a review to the previous review of the same
-- subject, so the history reads as one chain per subject. Rows written before this migration keep their free-text
-- reviewer and old decision words, unchanged: they are the unsigned part of the history and nothing rewrites them.

ALTER TABLE reviews ALTER COLUMN reviewer DROP NOT NULL;
ALTER TABLE reviews ADD COLUMN key_id uuid REFERENCES api_keys(id);
ALTER TABLE reviews ADD COLUMN verdict text CHECK (verdict IN ('pass', 'block'));
ALTER TABLE reviews ADD COLUMN supersedes uuid REFERENCES reviews(id);

-- Derived from the row itself, so the kind can never disagree with the columns (and old rows get theirs
-- without an UPDATE): 'audit' is only found on old rows, which could review an audit as a whole.
ALTER TABLE reviews ADD COLUMN subject text GENERATED ALWAYS AS (
    CASE WHEN verdict IS NOT NULL THEN 'verdict'
         WHEN finding IS NOT NULL THEN 'finding'
         WHEN cue IS NOT NULL THEN 'cue'
         ELSE 'audit' END) STORED;

-- Signed rows name no reviewer; old rows have a reviewer and no key.
ALTER TABLE reviews ADD CONSTRAINT reviews_signed_or_legacy CHECK ((key_id IS NULL) <> (reviewer IS NULL));

-- One vocabulary for signed rows; old rows keep the words they were written with.
ALTER TABLE reviews DROP CONSTRAINT reviews_decision_check;
ALTER TABLE reviews ADD CONSTRAINT reviews_decision_check CHECK (CASE WHEN key_id IS NULL
    THEN decision IN ('confirmed', 'dismissed', 'note', 'spurious-cue', 'acceptable', 'needs-more-data')
    ELSE decision IN ('spurious', 'acceptable', 'needs-data', 'override') END);

-- A signed row has exactly one subject; an override names the verdict it asks for; acceptable and override carry a reason.
ALTER TABLE reviews ADD CONSTRAINT reviews_signed_subject CHECK (key_id IS NULL OR (
    num_nonnulls(finding, cue, verdict) = 1
    AND (decision = 'override') = (verdict IS NOT NULL)
    AND (decision NOT IN ('acceptable', 'override') OR btrim(note) <> '')));

-- Each review is superseded at most once: the history of a subject is a chain, never a fork.
CREATE UNIQUE INDEX reviews_supersedes ON reviews (supersedes) WHERE supersedes IS NOT NULL;
CREATE INDEX reviews_audit ON reviews (audit_id, created_at, id);

-- Deleting an audit would have removed its reviews by cascade. Nothing in the service deletes audits; should anything
-- try, it now fails on the reviews instead of silently erasing who signed what.
ALTER TABLE reviews DROP CONSTRAINT reviews_audit_id_fkey;
ALTER TABLE reviews ADD CONSTRAINT reviews_audit_id_fkey FOREIGN KEY (audit_id) REFERENCES audits(id) ON DELETE RESTRICT;

-- New rows: signed, stamped by the database's clock and linked to the previous review of the same subject. The
-- per-audit advisory lock makes concurrent reviews of one audit take turns, so the chain is read and extended
-- atomically (the unique index above would refuse a fork anyway).
CREATE FUNCTION reviews_before_insert() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    IF NEW.key_id IS NULL THEN
        RAISE EXCEPTION 'reviews must be signed by an API key (key_id)' USING ERRCODE = 'not_null_violation';
    END IF;
    PERFORM pg_advisory_xact_lock(hashtext('auditsvc.reviews'), hashtext(NEW.audit_id::text));
    NEW.created_at := clock_timestamp();
    NEW.supersedes := (
        SELECT r.id FROM reviews r
        WHERE r.audit_id = NEW.audit_id
          AND r.finding IS NOT DISTINCT FROM NEW.finding
          AND r.cue IS NOT DISTINCT FROM NEW.cue
          AND (r.verdict IS NULL) = (NEW.verdict IS NULL)
        ORDER BY r.created_at DESC, r.id DESC
        LIMIT 1);
    RETURN NEW;
END $$;

CREATE TRIGGER reviews_before_insert BEFORE INSERT ON reviews FOR EACH ROW EXECUTE FUNCTION reviews_before_insert();

-- History is append-only: a changed mind is a new review that supersedes the old one.
CREATE FUNCTION reviews_append_only() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'reviews are append-only: % refused', TG_OP USING ERRCODE = 'insufficient_privilege';
END $$;

CREATE TRIGGER reviews_no_update_delete BEFORE UPDATE OR DELETE ON reviews FOR EACH ROW EXECUTE FUNCTION reviews_append_only();
CREATE TRIGGER reviews_no_truncate BEFORE TRUNCATE ON reviews FOR EACH STATEMENT EXECUTE FUNCTION reviews_append_only();
