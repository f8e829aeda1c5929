package service

import (
	"fmt"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Figures and words of the ConsumptionService on the wire (DEVELOPERS.md "Figures on the
// wire"): every figure a decimal string, "0" for zero, "" when unknown; the unit of a
// scope's figures (ODP t or CO2-eq t) is the ControlUnit beside them.

// controlUnitProto maps the unit of a control scope, as the arithmetic and the store name it.
func controlUnitProto(u string) halovetv1.ControlUnit {
	switch controls.Unit(u) {
	case controls.UnitODPTonnes:
		return halovetv1.ControlUnit_CONTROL_UNIT_ODP_TONNES
	case controls.UnitCO2eTonnes:
		return halovetv1.ControlUnit_CONTROL_UNIT_CO2E_TONNES
	}
	return halovetv1.ControlUnit_CONTROL_UNIT_UNSPECIFIED
}

// scheduleProto maps the rulebook's applies_to key.
var scheduleProto = map[string]halovetv1.ControlSchedule{
	"non-A5":         halovetv1.ControlSchedule_CONTROL_SCHEDULE_NON_ARTICLE_5,
	"A5":             halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5,
	"non-A5-variant": halovetv1.ControlSchedule_CONTROL_SCHEDULE_NON_ARTICLE_5_HFC_LATER_START,
	"A5-group1":      halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5_HFC_FIRST_GROUP,
	"A5-group2":      halovetv1.ControlSchedule_CONTROL_SCHEDULE_ARTICLE_5_HFC_SECOND_GROUP,
}

// basisProto maps the year report's basis of a quantity.
var basisProto = map[string]halovetv1.QuantityBasis{
	"shipments":       halovetv1.QuantityBasis_QUANTITY_BASIS_SHIPMENTS,
	"outside-customs": halovetv1.QuantityBasis_QUANTITY_BASIS_OUTSIDE_CUSTOMS,
	"whole-year":      halovetv1.QuantityBasis_QUANTITY_BASIS_WHOLE_YEAR,
	"national-entry":  halovetv1.QuantityBasis_QUANTITY_BASIS_NATIONAL_ENTRY,
}

// reportStateProto maps the year report's state.
var reportStateProto = map[string]halovetv1.ReportState{
	"provisional": halovetv1.ReportState_REPORT_STATE_PROVISIONAL,
	"closed":      halovetv1.ReportState_REPORT_STATE_CLOSED,
}

// dec writes a known figure: its exact decimal, "0" for zero.
func dec(d exact.Decimal) string { return d.String() }

// decIf writes a figure known only when known: "" (absent) otherwise.
func decIf(d exact.Decimal, known bool) string { return exact.Wire(d, known) }

// tonnesIn reads a request's figure named field (metric tonnes, an amount in the scope's
// unit, a fraction) for the ledger, which checks its range and says what it accepts: "" is
// 0. The figure is kept exactly as written (no float64 in between, so no limit of 15
// significant digits); an unreadable figure adds a violation naming the field.
func tonnesIn(field, s string, vs *[]fieldViolation) exact.Decimal {
	d, _, err := exact.ParseField(field, s)
	if err != nil {
		*vs = append(*vs, fieldViolation{field, fmt.Sprintf("%q is not a decimal; give the figure as a decimal string in plain notation, e.g. \"12.5\" or \"0\" (no exponent, no separators)", s)})
		return exact.Zero
	}
	return d
}

// indexed names the field of the i-th element of a repeated request field.
func indexed(list string, i int, field string) string {
	return fmt.Sprintf("%s[%d].%s", list, i, field)
}
