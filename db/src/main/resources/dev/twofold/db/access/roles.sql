-- Twofold's database roles: least privilege for the HTTP service and for the trainer.
--
-- Run by the owner of Twofold's tables (the user whose `twofold` commands applied the migrations),
-- after the migrations, with `twofold roles` (which fills in the role names below; defaults
-- twofold_service and twofold_trainer) or with psql on the output of `twofold roles --print`.
-- Running it again is harmless: it creates a role only when it is missing, never changes a role's
-- login or password, and replaces every table privilege the two roles hold with the lists below.
-- Run it again after an upgrade whose migrations add a table.
--
-- The roles are created without login. Give them one (ALTER ROLE ... LOGIN PASSWORD ...), or make
-- login roles members of them (CREATE ROLE api_1 LOGIN PASSWORD ... IN ROLE ${service_role}).
--
-- What each role may do follows what the code does (db/ and service/): anything else is refused
-- by PostgreSQL, whatever a compromised process asks for.

do $roles$
begin
    if not exists (select 1 from pg_roles where rolname = '${service_role}') then
        create role ${service_role} nologin;
    end if;
    if not exists (select 1 from pg_roles where rolname = '${trainer_role}') then
        create role ${trainer_role} nologin;
    end if;
    execute format('grant connect on database %I to ${service_role}, ${trainer_role}', current_database());
    -- PostgreSQL before 15 lets every role create tables in the public schema. Take that away when
    -- this user owns the schema (it keeps it as the owner); otherwise the owner of the schema should.
    if exists (select 1 from pg_namespace where nspname = 'public' and nspowner = (select oid from pg_roles where rolname = current_user)) then
        revoke create on schema public from public;
    end if;
end
$roles$;

grant usage on schema public to ${service_role}, ${trainer_role};

-- Start from nothing, so a privilege removed from this file is removed from the database too.
revoke all on all tables in schema public from ${service_role}, ${trainer_role};
revoke all on all sequences in schema public from ${service_role}, ${trainer_role};

-- Both check at start that the schema is up to date (Flyway reads its history; only the owner migrates).
grant select on flyway_schema_history to ${service_role}, ${trainer_role};

-- The service: answers from the active model; stores ratings and trust edges from the product
-- (new ids get rows in users and items); erases a user (their ratings, trust edges, user and
-- trust factor rows, and id); moves the active pointer for the admin routes (promote, rollback);
-- checks API keys and records when each was last used. It never writes factors, never creates or
-- deletes a model version, never changes a key's hash, role or revocation.
grant select, insert, delete on users to ${service_role};
grant select, insert on items to ${service_role};
grant select, insert, update, delete on ratings, trust to ${service_role};
grant select on models to ${service_role};
grant update (status) on models to ${service_role};
grant select, insert, update on active_model to ${service_role};
grant select, delete on model_user_factors, model_trust_factors to ${service_role};
grant select on model_item_factors to ${service_role};
grant select on api_keys to ${service_role};
grant update (last_used_at) on api_keys to ${service_role};

-- The trainer: reads ratings and trust; creates model versions with their factors, finishes,
-- promotes and deletes them (retention); records itself as the holder of the retrain lock. It
-- never writes ratings, trust or ids, and never sees API keys.
grant select on users, items, ratings, trust to ${trainer_role};
grant select, insert, update, delete on models, model_user_factors, model_item_factors, model_trust_factors to ${trainer_role};
grant select, insert, update on active_model to ${trainer_role};
grant select, insert, update, delete on retrain_holder to ${trainer_role};
