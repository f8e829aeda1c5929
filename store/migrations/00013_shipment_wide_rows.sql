-- +goose Up
-- A recorded shipment in one row: its components and its quota draws are kept in the
-- shipment's own row, as parallel arrays, instead of one row each in shipment_components
-- and quota_draws. Recording wrote 3-6 rows per shipment into three tables, each row with
-- its index entries and foreign-key probes, and the yearly totals' trigger looked every
-- component's shipment up again; it now writes one row per shipment with one COPY, and
-- the totals are summed per statement from the rows the statement wrote (BENCHMARKS.md).
--
-- component_*: one element per component, in designation order; element i of each array
-- belongs to the same component. component_non_party elements may be NULL (the
-- shipment's partner_non_party then applies, as for the column it replaces).
-- draw_lines / draw_amounts: one element per quota line drawn on, in line order; a
-- shipment draws only on its own licence (licence_number), which the invariants already
-- required of every draw. Voiding a shipment empties its draw arrays (the draws move to
-- released_draws, as before).
--
-- shipment_components and quota_draws stay, as views with the same columns, so that
-- every reader (reports, invariants, verify, the lifecycle) reads them unchanged.
-- Through the views: components are never inserted, updated or deleted (refused, as
-- migration 12 refused updates and deletes of the table); a draw may be deleted (voiding)
-- or have its amount updated, both written into the shipment's row; a draw is inserted
-- only with its shipment. A quota line drawn on cannot be deleted or renumbered (the
-- foreign key from quota_draws did that before).
--
-- The yearly totals (migration 12) are kept by statement-level triggers on shipments
-- alone: an insert adds the components of the live rows it wrote, an update takes the
-- old live rows' components off and puts the new ones on, both read from the transition
-- tables without any lookup.
--
-- Not compatible with the previous release: a server built before it writes components
-- and draws with COPY into tables that are now views.
DROP TRIGGER shipments_totals_change ON shipments;
DROP TRIGGER shipment_components_totals_add ON shipment_components;
DROP TRIGGER shipment_components_totals_refuse ON shipment_components;
DROP TRIGGER shipment_components_totals_truncate ON shipment_components;

ALTER TABLE shipments
    ADD COLUMN component_designations text[] NOT NULL DEFAULT '{}',
    ADD COLUMN component_annex_groups text[] NOT NULL DEFAULT '{}',
    ADD COLUMN component_mass_kg      numeric(30, 9)[] NOT NULL DEFAULT '{}',
    ADD COLUMN component_odp_tonnes   numeric(30, 9)[] NOT NULL DEFAULT '{}',
    ADD COLUMN component_co2e_tonnes  numeric(30, 9)[] NOT NULL DEFAULT '{}',
    ADD COLUMN component_non_party    boolean[] NOT NULL DEFAULT '{}',
    ADD COLUMN draw_lines             integer[] NOT NULL DEFAULT '{}',
    ADD COLUMN draw_amounts           numeric(30, 9)[] NOT NULL DEFAULT '{}';

-- +goose StatementBegin
DO $$
BEGIN
    IF EXISTS (SELECT 1 FROM quota_draws d JOIN shipments s USING (shipment_id) WHERE d.licence_number <> s.licence_number) THEN
        RAISE EXCEPTION 'a quota draw is on another licence than its shipment''s: run halovet verify (draw-on-own-licence) and repair it before this migration';
    END IF;
END;
$$;
-- +goose StatementEnd

UPDATE shipments s SET component_designations = c.des, component_annex_groups = c.grp, component_mass_kg = c.kg,
    component_odp_tonnes = c.odp, component_co2e_tonnes = c.co2e, component_non_party = c.np
FROM (SELECT shipment_id, array_agg(designation ORDER BY designation) AS des, array_agg(annex_group ORDER BY designation) AS grp,
        array_agg(mass_kg ORDER BY designation) AS kg, array_agg(odp_tonnes ORDER BY designation) AS odp,
        array_agg(co2e_tonnes ORDER BY designation) AS co2e, array_agg(partner_non_party ORDER BY designation) AS np
    FROM shipment_components GROUP BY shipment_id) c
WHERE c.shipment_id = s.shipment_id;

UPDATE shipments s SET draw_lines = d.lines, draw_amounts = d.amounts
FROM (SELECT shipment_id, array_agg(line_number ORDER BY line_number) AS lines, array_agg(amount ORDER BY line_number) AS amounts
    FROM quota_draws GROUP BY shipment_id) d
WHERE d.shipment_id = s.shipment_id;

DROP TABLE shipment_components;
DROP TABLE quota_draws;

ALTER TABLE shipments
    ADD CONSTRAINT shipments_components_shape CHECK (
        cardinality(component_annex_groups) = cardinality(component_designations)
        AND cardinality(component_mass_kg) = cardinality(component_designations)
        AND cardinality(component_odp_tonnes) = cardinality(component_designations)
        AND cardinality(component_co2e_tonnes) = cardinality(component_designations)
        AND cardinality(component_non_party) = cardinality(component_designations)),
    ADD CONSTRAINT shipments_draws_shape CHECK (
        cardinality(draw_amounts) = cardinality(draw_lines) AND 0 <= ALL (draw_amounts));

-- The primary keys of the tables replaced (one row per component designation, one draw per
-- quota line of a shipment) are kept in the schema itself, not only by the store.
-- +goose StatementBegin
CREATE FUNCTION elements_distinct(a anyarray) RETURNS boolean LANGUAGE sql IMMUTABLE STRICT PARALLEL SAFE AS $$
    SELECT count(DISTINCT e) = count(*) FROM unnest(a) AS e
$$;
-- +goose StatementEnd
ALTER TABLE shipments
    ADD CONSTRAINT shipments_components_distinct CHECK (elements_distinct(component_designations)),
    ADD CONSTRAINT shipments_draws_distinct CHECK (elements_distinct(draw_lines));

-- The arrays are unnested in the select list (one ProjectSet node, the arrays in
-- lockstep), not by a multi-argument unnest in FROM, which materialises every row's
-- elements in a tuplestore and cost the totals' trigger several times more.
CREATE VIEW shipment_components AS
SELECT s.shipment_id, unnest(s.component_designations) AS designation, unnest(s.component_annex_groups) AS annex_group,
    unnest(s.component_mass_kg) AS mass_kg, unnest(s.component_odp_tonnes) AS odp_tonnes,
    unnest(s.component_co2e_tonnes) AS co2e_tonnes, unnest(s.component_non_party) AS partner_non_party
FROM shipments s;

CREATE VIEW quota_draws AS
SELECT s.shipment_id, s.licence_number, unnest(s.draw_lines) AS line_number, unnest(s.draw_amounts) AS amount
FROM shipments s;

-- +goose StatementBegin
CREATE OR REPLACE FUNCTION shipment_year_totals_add() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO shipment_year_totals AS t (year, designation, annex_group, direction, purpose, condition, non_party, mass_kg, components)
    SELECT year, designation, annex_group, direction, purpose, condition, coalesce(np, partner_non_party), sum(kg), count(*)
    FROM (SELECT a.year, a.direction, a.purpose, a.condition, a.partner_non_party,
            unnest(a.component_designations) AS designation, unnest(a.component_annex_groups) AS annex_group,
            unnest(a.component_mass_kg) AS kg, unnest(a.component_non_party) AS np
        FROM added a WHERE a.state = 'live') c
    GROUP BY 1, 2, 3, 4, 5, 6, 7 ORDER BY 1, 2, 3, 4, 5, 6, 7
    ON CONFLICT (year, designation, annex_group, direction, purpose, condition, non_party)
    DO UPDATE SET mass_kg = t.mass_kg + EXCLUDED.mass_kg, components = t.components + EXCLUDED.components;
    RETURN NULL;
END;
$$;
-- +goose StatementEnd

-- +goose StatementBegin
CREATE OR REPLACE FUNCTION shipment_year_totals_change() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    INSERT INTO shipment_year_totals AS t (year, designation, annex_group, direction, purpose, condition, non_party, mass_kg, components)
    SELECT year, designation, annex_group, direction, purpose, condition, non_party, sum(kg), sum(n)
    FROM (
        SELECT year, designation, annex_group, direction, purpose, condition, coalesce(np, partner_non_party) AS non_party, -kg AS kg, -1 AS n
        FROM (SELECT o.year, o.direction, o.purpose, o.condition, o.partner_non_party,
                unnest(o.component_designations) AS designation, unnest(o.component_annex_groups) AS annex_group,
                unnest(o.component_mass_kg) AS kg, unnest(o.component_non_party) AS np
            FROM before o WHERE o.state = 'live') c
      UNION ALL
        SELECT year, designation, annex_group, direction, purpose, condition, coalesce(np, partner_non_party), kg, 1
        FROM (SELECT w.year, w.direction, w.purpose, w.condition, w.partner_non_party,
                unnest(w.component_designations) AS designation, unnest(w.component_annex_groups) AS annex_group,
                unnest(w.component_mass_kg) AS kg, unnest(w.component_non_party) AS np
            FROM after w WHERE w.state = 'live') c
    ) d
    GROUP BY 1, 2, 3, 4, 5, 6, 7 HAVING sum(n) <> 0 OR sum(kg) <> 0 ORDER BY 1, 2, 3, 4, 5, 6, 7
    ON CONFLICT (year, designation, annex_group, direction, purpose, condition, non_party)
    DO UPDATE SET mass_kg = t.mass_kg + EXCLUDED.mass_kg, components = t.components + EXCLUDED.components;
    RETURN NULL;
END;
$$;
-- +goose StatementEnd

-- +goose StatementBegin
CREATE FUNCTION shipment_components_refuse_write() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    RAISE EXCEPTION 'rows of shipment_components are written only with their shipment and never changed or deleted: void or correct a recorded shipment instead (the yearly totals in shipment_year_totals follow the register)'
        USING ERRCODE = 'restrict_violation';
END;
$$;
-- +goose StatementEnd

-- +goose StatementBegin
CREATE FUNCTION quota_draws_write() RETURNS trigger LANGUAGE plpgsql AS $$
DECLARE
    n integer;
BEGIN
    IF TG_OP = 'INSERT' THEN
        RAISE EXCEPTION 'quota draws are written only with their shipment (shipments.draw_lines, draw_amounts)'
            USING ERRCODE = 'restrict_violation';
    END IF;
    IF TG_OP = 'UPDATE' THEN
        IF (NEW.shipment_id, NEW.licence_number, NEW.line_number) IS DISTINCT FROM (OLD.shipment_id, OLD.licence_number, OLD.line_number) THEN
            RAISE EXCEPTION 'a quota draw''s shipment, licence and line are not changed: void or correct the shipment instead'
                USING ERRCODE = 'restrict_violation';
        END IF;
        UPDATE shipments s SET draw_amounts[x.p] = NEW.amount
        FROM (SELECT array_position(draw_lines, OLD.line_number) AS p FROM shipments WHERE shipment_id = OLD.shipment_id) x
        WHERE s.shipment_id = OLD.shipment_id AND x.p IS NOT NULL;
        GET DIAGNOSTICS n = ROW_COUNT;
        IF n = 0 THEN
            RETURN NULL;
        END IF;
        RETURN NEW;
    END IF;
    UPDATE shipments s SET draw_lines = coalesce(k.lines, '{}'), draw_amounts = coalesce(k.amounts, '{}')
    FROM (SELECT array_agg(l ORDER BY l) AS lines, array_agg(a ORDER BY l) AS amounts
          FROM shipments, unnest(draw_lines, draw_amounts) AS u(l, a)
          WHERE shipment_id = OLD.shipment_id AND l <> OLD.line_number) k
    WHERE s.shipment_id = OLD.shipment_id AND OLD.line_number = ANY (s.draw_lines);
    GET DIAGNOSTICS n = ROW_COUNT;
    IF n = 0 THEN
        RETURN NULL;
    END IF;
    RETURN OLD;
END;
$$;
-- +goose StatementEnd

-- +goose StatementBegin
CREATE FUNCTION quota_lines_refuse_drawn() RETURNS trigger LANGUAGE plpgsql AS $$
BEGIN
    IF TG_OP = 'UPDATE' THEN
        IF (NEW.licence_number, NEW.line_number) = (OLD.licence_number, OLD.line_number) THEN
            RETURN NEW;
        END IF;
    END IF;
    IF EXISTS (SELECT 1 FROM shipments WHERE licence_number = OLD.licence_number AND OLD.line_number = ANY (draw_lines)) THEN
        RAISE EXCEPTION 'quota line % of licence % is drawn on by recorded shipments and cannot be deleted or renumbered', OLD.line_number, OLD.licence_number
            USING ERRCODE = 'foreign_key_violation';
    END IF;
    IF TG_OP = 'DELETE' THEN
        RETURN OLD;
    END IF;
    RETURN NEW;
END;
$$;
-- +goose StatementEnd

CREATE TRIGGER shipments_totals_add AFTER INSERT ON shipments
    REFERENCING NEW TABLE AS added FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_add();
CREATE TRIGGER shipments_totals_change AFTER UPDATE ON shipments
    REFERENCING OLD TABLE AS before NEW TABLE AS after FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_change();
CREATE TRIGGER shipment_components_refuse INSTEAD OF INSERT OR UPDATE OR DELETE ON shipment_components
    FOR EACH ROW EXECUTE FUNCTION shipment_components_refuse_write();
CREATE TRIGGER quota_draws_write INSTEAD OF INSERT OR UPDATE OR DELETE ON quota_draws
    FOR EACH ROW EXECUTE FUNCTION quota_draws_write();
CREATE TRIGGER quota_lines_refuse_drawn BEFORE DELETE OR UPDATE OF licence_number, line_number ON quota_lines
    FOR EACH ROW EXECUTE FUNCTION quota_lines_refuse_drawn();

INSERT INTO schema_compatibility (version, oldest_server_schema, reason)
VALUES (13, 13, 'shipment components and quota draws are kept in the shipment''s row; shipment_components and quota_draws are views an older server cannot write');

-- +goose Down
DELETE FROM schema_compatibility WHERE version = 13;
DROP TRIGGER quota_lines_refuse_drawn ON quota_lines;
DROP TRIGGER shipments_totals_change ON shipments;
DROP TRIGGER shipments_totals_add ON shipments;
DROP VIEW quota_draws;
DROP VIEW shipment_components;
DROP FUNCTION quota_lines_refuse_drawn();
DROP FUNCTION quota_draws_write();
DROP FUNCTION shipment_components_refuse_write();

CREATE TABLE shipment_components (
    shipment_id  bigint NOT NULL REFERENCES shipments (shipment_id) ON DELETE CASCADE,
    designation  text NOT NULL,
    annex_group  text NOT NULL DEFAULT '',
    mass_kg      numeric(30, 9) NOT NULL,
    odp_tonnes   numeric(30, 9) NOT NULL,
    co2e_tonnes  numeric(30, 9) NOT NULL,
    partner_non_party boolean,
    PRIMARY KEY (shipment_id, designation)
);
INSERT INTO shipment_components
SELECT s.shipment_id, c.* FROM shipments s CROSS JOIN LATERAL unnest(s.component_designations, s.component_annex_groups,
    s.component_mass_kg, s.component_odp_tonnes, s.component_co2e_tonnes, s.component_non_party) AS c;
CREATE TABLE quota_draws (
    shipment_id     bigint NOT NULL REFERENCES shipments (shipment_id) ON DELETE CASCADE,
    licence_number  text NOT NULL,
    line_number     integer NOT NULL,
    amount          numeric(30, 9) NOT NULL CHECK (amount >= 0),
    PRIMARY KEY (shipment_id, licence_number, line_number),
    FOREIGN KEY (licence_number, line_number) REFERENCES quota_lines (licence_number, line_number)
);
INSERT INTO quota_draws
SELECT s.shipment_id, s.licence_number, d.* FROM shipments s CROSS JOIN LATERAL unnest(s.draw_lines, s.draw_amounts) AS d;
ALTER TABLE shipments
    DROP CONSTRAINT shipments_draws_distinct,
    DROP CONSTRAINT shipments_components_distinct,
    DROP CONSTRAINT shipments_draws_shape,
    DROP CONSTRAINT shipments_components_shape,
    DROP COLUMN draw_amounts,
    DROP COLUMN draw_lines,
    DROP COLUMN component_non_party,
    DROP COLUMN component_co2e_tonnes,
    DROP COLUMN component_odp_tonnes,
    DROP COLUMN component_mass_kg,
    DROP COLUMN component_annex_groups,
    DROP COLUMN component_designations;

-- +goose StatementBegin
CREATE OR REPLACE FUNCTION shipment_year_totals_add() RETURNS trigger LANGUAGE plpgsql AS $$
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
CREATE OR REPLACE FUNCTION shipment_year_totals_change() RETURNS trigger LANGUAGE plpgsql AS $$
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

CREATE TRIGGER shipment_components_totals_add AFTER INSERT ON shipment_components
    REFERENCING NEW TABLE AS added FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_add();
CREATE TRIGGER shipments_totals_change AFTER UPDATE ON shipments
    REFERENCING OLD TABLE AS before NEW TABLE AS after FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_change();
CREATE TRIGGER shipment_components_totals_refuse BEFORE UPDATE OR DELETE ON shipment_components
    FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_refuse_delete();
CREATE TRIGGER shipment_components_totals_truncate AFTER TRUNCATE ON shipment_components
    FOR EACH STATEMENT EXECUTE FUNCTION shipment_year_totals_truncate();

DROP FUNCTION elements_distinct(anyarray);
