// Package substances owns the halocarbon catalogue: substances and blends with their
// identifiers, control status, ODP, GWP and lifetime, the identifier codecs (ASHRAE 34
// designations, CAS numbers, formulas, HS codes) and the arithmetic of mixtures.
package substances
