-- +goose Up
-- elements_distinct (migration 13), which the CHECK constraints shipments_components_distinct
-- and shipments_draws_distinct call on every row written, becomes an expression the
-- planner inlines into the constraints, with the same result for every array.
--
-- Migration 13 wrote it as a query (count(DISTINCT e) = count(*) over unnest(a)): a SQL
-- function with a FROM clause is never inlined, so each row written ran a small query of
-- its own, twice (components and draws), sorting for the DISTINCT. The statement log of
-- the recording benchmark put the two at 5 % of the recording's statement time, and a
-- COPY of 10,000 recorded rows spent about a fifth of its server CPU on them
-- (BENCHMARKS.md, "Recording: cheaper constraints, fewer round trips").
--
-- The same guarantee, kept in the schema (so that whoever writes the table, not only the
-- recorder, is held to it): an array passes when it is NULL (the constraint then passes,
-- as a STRICT function's NULL did) or when its elements are not NULL and pairwise
-- distinct. For the arrays the register holds (one dimension, lower bound 1, at most four
-- elements: one component or draw on most shipments, two to four on a blend) the pairs
-- are compared directly, in the row, without a query; any other array (five or more
-- elements, another lower bound, several dimensions) goes to the query of migration 13,
-- kept as elements_distinct_scan. The function is no longer STRICT: the planner does not
-- inline a STRICT function whose body (a CASE) is not strict; its NULL answer for a NULL
-- array is written out instead. store's TestElementsDistinctMatchesTheScan compares both
-- on arrays of every kind.
--
-- The constraints themselves are unchanged (same names, same expression); no row is
-- checked again. Compatible with the previous release: the function gives the same
-- answers, so the migration adds no schema_compatibility row.

-- +goose StatementBegin
CREATE FUNCTION elements_distinct_scan(a anyarray) RETURNS boolean LANGUAGE sql IMMUTABLE STRICT PARALLEL SAFE AS $$
    SELECT count(DISTINCT e) = count(*) FROM unnest(a) AS e
$$;
-- +goose StatementEnd

-- +goose StatementBegin
CREATE OR REPLACE FUNCTION elements_distinct(a anyarray) RETURNS boolean LANGUAGE sql IMMUTABLE PARALLEL SAFE AS $$
    SELECT CASE
        WHEN a IS NULL THEN NULL
        WHEN cardinality(a) = 0 THEN true
        WHEN array_ndims(a) <> 1 OR array_lower(a, 1) <> 1 THEN elements_distinct_scan(a)
        WHEN cardinality(a) = 1 THEN a[1] IS NOT NULL
        WHEN cardinality(a) = 2 THEN coalesce(a[1] <> a[2], false)
        WHEN cardinality(a) = 3 THEN coalesce(a[1] <> a[2] AND a[1] <> a[3] AND a[2] <> a[3], false)
        WHEN cardinality(a) = 4 THEN coalesce(a[1] <> a[2] AND a[1] <> a[3] AND a[1] <> a[4]
            AND a[2] <> a[3] AND a[2] <> a[4] AND a[3] <> a[4], false)
        ELSE elements_distinct_scan(a)
    END
$$;
-- +goose StatementEnd

-- +goose Down
-- +goose StatementBegin
CREATE OR REPLACE FUNCTION elements_distinct(a anyarray) RETURNS boolean LANGUAGE sql IMMUTABLE STRICT PARALLEL SAFE AS $$
    SELECT count(DISTINCT e) = count(*) FROM unnest(a) AS e
$$;
-- +goose StatementEnd
DROP FUNCTION elements_distinct_scan(anyarray);
