-- Fair sharing between teams: a chunk is handed to the job queue (dispatched) only while its team has fewer chunks
-- queued or running than its window; dispatched_at says when it was handed over (NULL: not yet, which is normal).
ALTER TABLE audit_chunks ADD COLUMN dispatched_at timestamptz;

-- Audits started before this script had every open chunk enqueued at once: those chunks are in flight already.
UPDATE audit_chunks SET dispatched_at = now() WHERE state <> 'done';

CREATE INDEX audit_chunks_open ON audit_chunks(audit_id, chunk_index) WHERE state <> 'done';
