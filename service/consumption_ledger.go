package service

import (
	"context"
	"fmt"
	"slices"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/store"
)

// doubleCountViolations refuses whole-year entries (not outside customs) of a use that
// recorded shipments of the same substance and year already deduct.
func (s *Server) doubleCountViolations(ctx context.Context, entries []store.NationalEntry) ([]fieldViolation, error) {
	var years []int
	for _, e := range entries {
		if controls.DeductedUse(e.Type) && !e.OutsideCustoms && !slices.Contains(years, e.Year) {
			years = append(years, e.Year)
		}
	}
	if len(years) == 0 {
		return nil, nil
	}
	ts, err := s.store.ShipmentTotals(ctx, years)
	if err != nil {
		return nil, err
	}
	ships := make([]controls.ShipmentTotal, len(ts))
	for i, t := range ts {
		ships[i] = controls.ShipmentTotal{Year: t.Year, Designation: t.Designation, Direction: t.Direction, Purpose: t.Purpose, Condition: t.Condition, Tonnes: t.Tonnes}
	}
	uses := controls.DeclaredUses(s.cat.Load(), ships)
	var vs []fieldViolation
	for i, e := range entries {
		if !controls.DeductedUse(e.Type) || e.OutsideCustoms {
			continue
		}
		if t, ok := uses[controls.UseKey{Year: e.Year, Substance: e.Substance, Use: e.Type}]; ok {
			vs = append(vs, fieldViolation{fmt.Sprintf("entries[%d].outside_customs", i), fmt.Sprintf(
				"is false, but %s t of %s recorded as imports for %s in %d are deducted already through their declared purpose; the entry would count the same use twice: enter only the quantity that never passed customs (e.g. domestic production used as feedstock, stocks destroyed) and set outside_customs",
				controls.FormatTonnes(t), e.Substance, e.Type, e.Year)})
		}
	}
	return vs, nil
}
