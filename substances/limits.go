package substances

import "fmt"

// MaxComponents is the most components a composition given to EvaluateShares or a reading
// given to Analyse may list. No blend of ASHRAE 34 comes near it (the largest have five or
// six components), so the bound only stops hostile or broken input before any work is done:
// each component is resolved, and duplicates are looked for, per component.
const MaxComponents = 16

// checkComponentCount refuses a list longer than MaxComponents.
func checkComponentCount(field string, n int) error {
	if n > MaxComponents {
		return &InputError{Field: field, Reason: fmt.Sprintf("%d components are given; at most %d are accepted", n, MaxComponents)}
	}
	return nil
}
