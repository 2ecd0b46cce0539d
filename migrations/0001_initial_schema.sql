-- Teams own everything; every team-visible table carries team_id so a query can be scoped by it.
CREATE TABLE teams (
    id          uuid PRIMARY KEY,
    name        text NOT NULL UNIQUE,
    created_at  timestamptz NOT NULL DEFAULT now()
);

-- Only a SHA-256 of the secret is kept; the prefix finds the row, the hash is compared in constant time.
CREATE TABLE api_keys (
    id          uuid PRIMARY KEY,
    team_id     uuid NOT NULL REFERENCES teams(id),
    prefix      text NOT NULL UNIQUE,
    hash        bytea NOT NULL,
    name        text NOT NULL,
    created_at  timestamptz NOT NULL DEFAULT now(),
    revoked_at  timestamptz
);

CREATE TABLE models (
    id             uuid PRIMARY KEY,
    team_id        uuid NOT NULL REFERENCES teams(id),
    name           text NOT NULL,
    content_hash   text NOT NULL,
    relative_path  text NOT NULL,
    recipe         jsonb NOT NULL,
    layers         jsonb NOT NULL,
    created_at     timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX models_team ON models(team_id, created_at DESC);

CREATE TABLE image_sets (
    id             uuid PRIMARY KEY,
    team_id        uuid NOT NULL REFERENCES teams(id),
    name           text NOT NULL,
    content_hash   text NOT NULL,
    relative_path  text NOT NULL,
    labels         jsonb NOT NULL,
    attributes     jsonb NOT NULL,
    report         jsonb NOT NULL,
    item_count     integer NOT NULL,
    created_at     timestamptz NOT NULL DEFAULT now()
);
CREATE INDEX image_sets_team ON image_sets(team_id, created_at DESC);

-- One row per usable image, in intake order; chunks address items by idx ranges. relative_path is as
-- intake reported it (it appears in audit.json); file_path locates the file from the image set's folder.
CREATE TABLE items (
    image_set_id   uuid NOT NULL REFERENCES image_sets(id) ON DELETE CASCADE,
    idx            integer NOT NULL,
    source_row     integer NOT NULL,
    relative_path  text NOT NULL,
    file_path      text NOT NULL,
    label          integer NOT NULL,
    attributes     integer[] NOT NULL,
    sha256         text NOT NULL,
    PRIMARY KEY (image_set_id, idx)
);

CREATE TABLE audits (
    id                 uuid PRIMARY KEY,
    team_id            uuid NOT NULL REFERENCES teams(id),
    model_id           uuid NOT NULL REFERENCES models(id),
    image_set_id       uuid NOT NULL REFERENCES image_sets(id),
    state              text NOT NULL CHECK (state IN ('queued','running','merging','done','failed','cancelled')),
    items_total        integer NOT NULL,
    items_done         integer NOT NULL DEFAULT 0,
    chunk_size         integer NOT NULL CHECK (chunk_size > 0),
    chunks_total       integer NOT NULL,
    chunks_done        integer NOT NULL DEFAULT 0,
    policy             jsonb NOT NULL,
    result             json,  -- json, not jsonb: kept byte for byte as the engine wrote audit.json
    verdict            text CHECK (verdict IN ('pass','block')),
    error              text,
    merge_lease_until  timestamptz,
    merge_attempts     integer NOT NULL DEFAULT 0,
    created_at         timestamptz NOT NULL DEFAULT now(),
    started_at         timestamptz,
    finished_at        timestamptz
);
CREATE INDEX audits_team ON audits(team_id, created_at DESC);
CREATE INDEX audits_open ON audits(state) WHERE state IN ('queued','running','merging');

-- Keyed by audit and chunk so a repeated job finds its own row; the lease makes a long chunk
-- invisible to other workers while its owner keeps extending it.
CREATE TABLE audit_chunks (
    audit_id     uuid NOT NULL REFERENCES audits(id) ON DELETE CASCADE,
    chunk_index  integer NOT NULL,
    start_item   integer NOT NULL,
    item_count   integer NOT NULL,
    state        text NOT NULL CHECK (state IN ('pending','running','done')),
    attempt      integer NOT NULL DEFAULT 0,
    lease_token  uuid,
    lease_until  timestamptz,
    result_path  text,
    result       bytea,
    updated_at   timestamptz NOT NULL DEFAULT now(),
    PRIMARY KEY (audit_id, chunk_index)
);

CREATE TABLE findings (
    audit_id    uuid NOT NULL REFERENCES audits(id) ON DELETE CASCADE,
    ordinal     integer NOT NULL,
    layer       text NOT NULL,
    unit        integer NOT NULL,
    attribute   text NOT NULL,
    value       text NOT NULL,
    odds_ratio  double precision,
    q_value     double precision,
    region      text,
    detail      jsonb NOT NULL,
    PRIMARY KEY (audit_id, ordinal)
);

CREATE TABLE attribute_scores (
    audit_id   uuid NOT NULL REFERENCES audits(id) ON DELETE CASCADE,
    attribute  text NOT NULL,
    leakage    double precision NOT NULL,
    verdict    text NOT NULL,
    measures   jsonb NOT NULL,
    PRIMARY KEY (audit_id, attribute)
);

CREATE TABLE reviews (
    id           uuid PRIMARY KEY,
    audit_id     uuid NOT NULL REFERENCES audits(id) ON DELETE CASCADE,
    finding      integer,
    reviewer     text NOT NULL,
    decision     text NOT NULL CHECK (decision IN ('confirmed','dismissed','note')),
    note         text NOT NULL DEFAULT '',
    created_at   timestamptz NOT NULL DEFAULT now()
);
