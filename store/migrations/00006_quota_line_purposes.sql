-- A quota line may be limited to declared purposes (an allowance for an exempted use, for
-- example the critical uses of methyl bromide the Parties authorise under Article 2H para 5)
-- and may cover Annex F as a whole (annex_group 'F', counted in CO2-eq tonnes as Article 2J
-- counts the HFC phase-down).

-- +goose Up
ALTER TABLE quota_lines ADD COLUMN purposes text[] NOT NULL DEFAULT '{}';
ALTER TABLE quota_lines ADD CONSTRAINT quota_lines_whole_annex_f_in_co2e
    CHECK (annex_group <> 'F' OR unit = 'co2e-t');

-- +goose Down
ALTER TABLE quota_lines DROP CONSTRAINT quota_lines_whole_annex_f_in_co2e;
ALTER TABLE quota_lines DROP COLUMN purposes;
