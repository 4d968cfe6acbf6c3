-- Twofold schema: who holds the retrain lock.
--
-- One retrain runs at a time. The lock itself is a session-level PostgreSQL advisory lock held on a
-- dedicated connection for the whole run (see RetrainLock), so it disappears with the trainer's
-- session however the trainer ends, kill -9 included. This table only says who holds it, so that a
-- second trainer can name the holder. A row left by a trainer that died is harmless: it is trusted
-- only when its backend_pid is the session that holds the advisory lock right now, and the next
-- holder replaces it.
create table retrain_holder (
    singleton   boolean primary key default true check (singleton),
    backend_pid integer not null,          -- pg_backend_pid() of the session holding the lock
    host        text not null,             -- the trainer's host name
    process_id  bigint not null,           -- the trainer's operating-system process id
    command     text not null,             -- what it runs, e.g. 'twofold train'
    started_at  timestamptz not null default now()
);
