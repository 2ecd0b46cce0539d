-- Fair sharing between teams: a chunk is handed to the job queue (dispatched) only while its team has fewer chunks
-- queued or running than its window; dispatched_at says when it was handed over (NULL: not yet, which is normal).
ALTER TABLE audit_chunks ADD COLUMN dispatched_at timestamptz;

-- Audits running before this script had every open chunk enqueued at start: those chunks are in flight already.
-- (Audits still queued have not enqueued any: their start job dispatches them the new way.)
UPDATE audit_chunks c SET dispatched_at = now()
FROM audits a
WHERE a.id = c.audit_id AND a.state = 'running' AND c.state <> 'done';

CREATE INDEX audit_chunks_open ON audit_chunks(audit_id, chunk_index) WHERE state <> 'done';
