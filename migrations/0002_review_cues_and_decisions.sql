-- Reviews from the browser pages: a review may concern a cue group (attribute=value) rather than one
-- finding, and the reviewer's decisions there are spurious-cue, acceptable and needs-more-data.
-- The earlier decisions stay valid for reviews recorded through the REST API.
ALTER TABLE reviews ADD COLUMN cue text;

ALTER TABLE reviews DROP CONSTRAINT reviews_decision_check;
ALTER TABLE reviews ADD CONSTRAINT reviews_decision_check
    CHECK (decision IN ('confirmed', 'dismissed', 'note', 'spurious-cue', 'acceptable', 'needs-more-data'));
