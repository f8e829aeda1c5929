-- +goose Up
-- Yearly totals of the register, kept by triggers in the transaction that records, voids
-- or corrects the shipments, so that consumption, baselines and compliance read a few
-- hundred rows instead of joining every shipment with its components (on a register of
-- a million shipments the join took seconds; see BENCHMARKS.md).
--
-- shipment_year_totals holds, per year, component designation, recorded group,
-- direction, purpose, condition and partner status, the exact numeric sum of the live
-- components' mass and how many component rows it sums: the same sums ShipmentTotals
-- computed with a GROUP BY over the join. A row whose count falls to 0 (every shipment
-- behind it voided or corrected away) stays, with 0 kg, and is not reported. (No CHECK
-- on the count: an upsert checks the row it proposes, and a voiding proposes a negative
-- one; CheckInvariants compares the totals with the register instead.)
--
-- Statement-level triggers with transition tables: inserting components adds them when
-- their shipment is live; an update of shipments (voiding, superseding, or any change of
-- a column the totals group by) takes the old live rows' components off and puts the new
-- live rows' components on. Deleting shipments or components is refused (the register
-- keeps voided rows; nothing deletes them), and TRUNCATE of either table empties the
-- totals with it. Each statement updates its totals rows in key order, so concurrent
-- recorders take the row locks in the same order; a deadlock between transactions of
-- several statements is retried by the store as before.
--
-- The triggers look each row of the statement up by id in a LATERAL subquery that the
-- planner may not flatten (OFFSET 0): one primary-key probe per row. A plain join let the
-- planner, which cannot estimate a transition table and caches the function's plan from
-- when the register was small, scan the whole register per batch: recording slowed as
-- the register grew.
--
-- Compatible with the previous release: it writes through the same tables (the triggers
-- keep the totals) and reads the join, so the migration adds no schema_compatibility row.
CREATE TABLE shipment_year_totals (
    year          integer NOT NULL,
    designation   text NOT NULL,
    annex_group   text NOT NULL,
    direction     text NOT NULL,
    purpose       text NOT NULL,
    condition     text NOT NULL,
    non_party     boolean NOT NULL,
    mass_kg       numeric NOT NULL,
    components    bigint NOT NULL,
    PRIMARY KEY (year, designation, annex_group, direction, purpose, condition, non_party)
);

-- +goose StatementBegin
CREATE FUNCTION shipment_year_totals_add() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO shipment_year_totals AS t (year, designation, annex_group, direction, purpose, condition, non_party, mass_kg, components)
    SELECT s.year, c.designation, c.annex_group, s.direction, s.purpose, s.condition,
           coalesce(c.partner_non_party, s.partner_non_party), sum(c.mass_kg), count(*)
    FROM added c CROSS JOIN LATERAL (SELECT year, direction, purpose, condition, partner_non_party FROM shipments
        WHERE shipment_id = c.shipment_id AND state = 'live' OFFSET 0) s
    GROUP BY 1, 2, 3, 4, 5, 6, 7 ORDER BY 1, 2, 3, 4, 5, 6, 7
    ON CONFLICT (year, designation, annex_group, direction, purpose, condition, non_party)
    DO UPDATE SET mass_kg = t.mass_kg + EXCLUDED.mass_kg, components = t.components + EXCLUDED.components;
    RETURN NULL;
END;
$$;
-- +goose StatementEnd

-- +goose StatementBegin
CREATE FUNCTION shipment_year_totals_change() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO shipment_year_totals AS t (year, designation, annex_group, direction, purpose, condition, non_party, mass_kg, components)
    SELECT year, designation, annex_group, direction, purpose, condition, non_party, sum(kg), sum(n)
    FROM (
        SELECT o.year, c.designation, c.annex_group, o.direction, o.purpose, o.condition,
               coalesce(c.partner_non_party, o.partner_non_party) AS non_party, -c.mass_kg AS kg, -1 AS n
        FROM before o CROSS JOIN LATERAL (SELECT designation, annex_group, partner_non_party, mass_kg FROM shipment_components
            WHERE shipment_id = o.shipment_id OFFSET 0) c
        WHERE o.state = 'live'
      UNION ALL
        SELECT w.year, c.designation, c.annex_group, w.direction, w.purpose, w.condition,
               coalesce(c.partner_non_party, w.partner_non_party), c.mass_kg, 1
        FROM after w CROSS JOIN LATERAL (SELECT designation, annex_group, partner_non_party, mass_kg FROM shipment_components
            WHERE shipment_id = w.shipment_id OFFSET 0) c
        WHERE w.state = 'live'
    ) d
    GROUP BY 1, 2, 3, 4, 5, 6, 7 HAVING sum(n) <> 0 OR sum(kg) <> 0 ORDER BY 1, 2, 3, 4, 5, 6, 7
    ON CONFLICT (year, designation, annex_group, direction, purpose, condition, non_party)
    DO UPDATE SET mass_kg = t.mass_kg + EXCLUDED.mass_kg, components = t.components + EXCLUDED.components;
    RETURN NULL;
END;
$$;
-- +goose StatementEnd

-- +goose StatementBegin
CREATE FUNCTION shipment_year_totals_refuse_delete() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'rows of % are never deleted: void a recorded shipment instead (the yearly totals in shipment_year_totals follow the register)', TG_TABLE_NAME
        USING ERRCODE = 'restrict_violation';
END;
$$;
-- +goose StatementEnd

-- +goose StatementBegin
CREATE FUNCTION shipment_year_totals_truncate() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    TRUNCATE shipment_year_totals;
    RETURN NULL;
END;
$$;
-- +goose StatementEnd

CREATE TRIGGER shipment_components_totals_add AFTER INSERT ON shipment_components
    REFERENCING NEW TABLE AS added FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_add();
CREATE TRIGGER shipments_totals_change AFTER UPDATE ON shipments
    REFERENCING OLD TABLE AS before NEW TABLE AS after FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_change();
CREATE TRIGGER shipment_components_totals_refuse BEFORE UPDATE OR DELETE ON shipment_components
    FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_refuse_delete();
CREATE TRIGGER shipments_totals_refuse BEFORE DELETE ON shipments
    FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_refuse_delete();
CREATE TRIGGER shipment_components_totals_truncate AFTER TRUNCATE ON shipment_components
    FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_truncate();
CREATE TRIGGER shipments_totals_truncate AFTER TRUNCATE ON shipments
    FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_truncate();

INSERT INTO shipment_year_totals (year, designation, annex_group, direction, purpose, condition, non_party, mass_kg, components)
SELECT s.year, c.designation, c.annex_group, s.direction, s.purpose, s.condition,
       coalesce(c.partner_non_party, s.partner_non_party), sum(c.mass_kg), count(*)
FROM shipments s JOIN shipment_components c ON c.shipment_id = s.shipment_id
WHERE s.state = 'live'
GROUP BY 1, 2, 3, 4, 5, 6, 7;

-- +goose Down
DROP TRIGGER shipments_totals_truncate ON shipments;
DROP TRIGGER shipment_components_totals_truncate ON shipment_components;
DROP TRIGGER shipments_totals_refuse ON shipments;
DROP TRIGGER shipment_components_totals_refuse ON shipment_components;
DROP TRIGGER shipments_totals_change ON shipments;
DROP TRIGGER shipment_components_totals_add ON shipment_components;
DROP FUNCTION shipment_year_totals_truncate();
DROP FUNCTION shipment_year_totals_refuse_delete();
DROP FUNCTION shipment_year_totals_change();
DROP FUNCTION shipment_year_totals_add();
DROP TABLE shipment_year_totals;
