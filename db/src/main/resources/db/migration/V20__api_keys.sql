-- API keys for the HTTP service. Only a SHA-256 hash of each key is stored: keys are 256 random
-- bits, so a fast hash is enough (nothing to brute-force), and a stolen table opens nothing.
-- `shown` keeps the first characters of the key so a person can tell keys apart in `keys list`.
create table api_keys (
    id           bigint generated always as identity primary key,
    name         text not null check (char_length(name) between 1 and 64),
    role         text not null check (role in ('read', 'write', 'admin')),
    key_hash     bytea not null unique check (octet_length(key_hash) = 32),
    shown        text not null,
    created_at   timestamptz not null default now(),
    last_used_at timestamptz,
    revoked_at   timestamptz
);
-- A name names one live key; a revoked key's name may be given to a new one.
create unique index api_keys_live_name on api_keys (name) where revoked_at is null;
