-- +goose Up
-- Party status is per Annex group (Montreal Protocol Article 4 para 9): a shipment component
-- records whether the partner was bound for the component's own group. An export deducts a
-- component from consumption only when the partner is bound for its group (Article 3 para
-- 1(c)). NULL for rows recorded before this migration or by an older server: the shipment's
-- partner_non_party flag then applies, as before. Compatible with the previous release (a
-- nullable column it does not write).
ALTER TABLE shipment_components ADD COLUMN partner_non_party boolean;

-- +goose Down
ALTER TABLE shipment_components DROP COLUMN partner_non_party;
