-- Twofold schema, version 1.
--
-- Users and items get dense integer indices (idx) the trainer and service use as array offsets;
-- external ids are the strings of the product backend. Indices are never reused; a rolled-back
-- insert may leave a gap, so the index space is max(idx) + 1 and unused slots are simply empty.
-- Indices start at 0.

create table users (
    idx         integer generated always as identity (start with 0 minvalue 0) primary key,
    external_id text not null unique check (char_length(external_id) between 1 and 128),
    created_at  timestamptz not null default now()
);

create table items (
    idx         integer generated always as identity (start with 0 minvalue 0) primary key,
    external_id text not null unique check (char_length(external_id) between 1 and 128),
    created_at  timestamptz not null default now()
);

-- ratings and trust carry no foreign keys to users/items: every Twofold write path maps external
-- ids through those tables, so the indices always exist, and per-row key checks (each one locks the
-- referenced row) multiplied the time of a million-row import several times over. Erasing a user
-- deletes its ratings and trust edges explicitly.

-- One row per (user, item): the latest rating wins (see the importer for the exact rule).
-- rated_at is the time the rating was given, when the source knew it; updated_at is when Twofold stored it.
create table ratings (
    user_idx   integer not null check (user_idx >= 0),
    item_idx   integer not null check (item_idx >= 0),
    rating     real not null check (rating > '-Infinity' and rating < 'Infinity'),  -- finite (NaN sorts above Infinity)
    rated_at   timestamptz,
    updated_at timestamptz not null default now(),
    primary key (user_idx, item_idx)
);

-- A directed edge: truster follows trustee's taste with a weight in (0, 1].
create table trust (
    truster_idx integer not null check (truster_idx >= 0),
    trustee_idx integer not null check (trustee_idx >= 0),
    weight      real not null default 1 check (weight > 0 and weight <= 1),
    created_at  timestamptz not null default now(),
    updated_at  timestamptz not null default now(),
    primary key (truster_idx, trustee_idx),
    check (truster_idx <> trustee_idx)
);
-- Finding who trusts a user (erasing a user, neighbour terms) without a full scan.
create index trust_by_trustee on trust (trustee_idx);

-- Model versions. Typed columns are what the service needs to score; params, metrics and counts
-- keep the full story as JSON.
create table models (
    id           bigint generated always as identity primary key,
    status       text not null default 'training'
                 check (status in ('training', 'candidate', 'active', 'rejected', 'failed', 'retired')),
    rank         integer not null check (rank > 0),
    coupling     text not null check (coupling in ('shared', 'neighbour', 'none')),
    lambda       real not null check (lambda >= 0),
    trust_weight real not null check (trust_weight >= 0),
    trust_alpha  real not null check (trust_alpha >= 0),
    scale_min    real not null,
    scale_max    real not null,
    global_mean  real not null,
    num_users    integer not null check (num_users >= 0),
    num_items    integer not null check (num_items >= 0),
    created_at   timestamptz not null default now(),
    finished_at  timestamptz,
    params       jsonb not null default '{}',
    metrics      jsonb not null default '{}',
    counts       jsonb not null default '{}',
    reason       text,
    check (scale_min < scale_max)
);
create index models_by_status on models (status);

-- Factor rows: `factors` is rank little-endian IEEE-754 float32 values (4 * rank bytes).
-- Only users and items that had training data have rows. Like ratings, these tables have no
-- foreign key: rows are written only by the registry after it has locked the model row, and the
-- per-row key checks made storing 220k rows (rank 32) four times slower. Deleting a model version
-- deletes its factor rows explicitly.
create table model_user_factors (
    model_id bigint not null,
    user_idx integer not null check (user_idx >= 0),
    bias     real not null,
    factors  bytea not null check (octet_length(factors) % 4 = 0),
    primary key (model_id, user_idx)
);

create table model_item_factors (
    model_id   bigint not null,
    item_idx   integer not null check (item_idx >= 0),
    bias       real not null,
    popularity real not null,
    factors    bytea not null check (octet_length(factors) % 4 = 0),
    primary key (model_id, item_idx)
);

-- Z of the shared-factor trust coupling (T ~ P Z^T); empty for other couplings.
create table model_trust_factors (
    model_id bigint not null,
    user_idx integer not null check (user_idx >= 0),
    factors  bytea not null check (octet_length(factors) % 4 = 0),
    primary key (model_id, user_idx)
);

-- The model the service should serve: at most one row. previous_model_id is what rollback returns to.
create table active_model (
    singleton         boolean primary key default true check (singleton),
    model_id          bigint not null references models (id),
    previous_model_id bigint references models (id),
    changed_at        timestamptz not null default now()
);
