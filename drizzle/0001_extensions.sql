-- Trusted extensions (PostgreSQL 13+): the database owner may create them.
-- pg_trgm: substring search on names; btree_gist: exclusion constraints on time ranges.
CREATE EXTENSION IF NOT EXISTS pg_trgm;
--> statement-breakpoint
CREATE EXTENSION IF NOT EXISTS btree_gist;
