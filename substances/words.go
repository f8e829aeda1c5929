package substances

import (
	"fmt"
	"strings"

	"github.com/halovet/halovet/terms"
)

// The catalogue's closed vocabularies that travel on the wire as enums (GWP set, mixture GWP
// convention, HS edition, blend type) are string types here, their values the words the seed
// files and the database hold. Each has a Parse function that reads that word, the wire enum
// name (GWP_SET_IPCC_AR4) and the spellings people write ("IPCC AR4", "HS 2022"),
// case-insensitively, tolerating hyphens, underscores and spaces; its error wraps
// terms.ErrUnknownValue and lists the accepted words.

// wordSet is one vocabulary: each value with the reduced spellings (terms.Key) that read as it.
type wordSet[T ~string] struct {
	what   string // the concept, for messages
	prefix string // reduced wire-name prefix, e.g. "gwpset"
	values []T
	spell  map[string]T
}

func newWordSet[T ~string](what, prefix string, values []T, extra map[string]T) wordSet[T] {
	w := wordSet[T]{what: what, prefix: prefix, values: values, spell: map[string]T{}}
	for _, v := range values {
		w.spell[terms.Key(string(v))] = v
	}
	for k, v := range extra {
		w.spell[terms.Key(k)] = v
	}
	return w
}

func (w wordSet[T]) parse(s string) (T, error) {
	if strings.TrimSpace(s) == "" {
		return "", nil
	}
	k := terms.Key(s)
	if k != "" {
		if v, ok := w.spell[k]; ok {
			return v, nil
		}
		if rest, ok := strings.CutPrefix(k, w.prefix); ok {
			if rest == "unspecified" {
				return "", nil
			}
			if v, ok := w.spell[rest]; ok {
				return v, nil
			}
		}
	}
	names := make([]string, len(w.values))
	for i, v := range w.values {
		names[i] = string(v)
	}
	return "", fmt.Errorf("%w: %s %q; accepted: %s", terms.ErrUnknownValue, w.what, terms.Cut(s), strings.Join(names, ", "))
}

var gwpSetWords = newWordSet("GWP set", "gwpset", []GWPSet{SetProtocol, SetAR4, SetAR5, SetAR6},
	map[string]GWPSet{"protocol": SetProtocol, "protocol annexes": SetProtocol, "montreal protocol": SetProtocol,
		"ipcc ar4": SetAR4, "ipcc ar5": SetAR5, "ipcc ar6": SetAR6})

// GWPSets lists the GWP sets the catalogue carries: the Protocol's Annex values, then the
// IPCC assessment reports in order.
func GWPSets() []GWPSet { return []GWPSet{SetProtocol, SetAR4, SetAR5, SetAR6} }

// ParseGWPSet reads a GWP set: "MP" (also "protocol", "protocol annexes"), "AR4", "IPCC AR5",
// "GWP_SET_IPCC_AR6". Empty text gives "" and no error.
func ParseGWPSet(s string) (GWPSet, error) { return gwpSetWords.parse(s) }

// GWPConvention says which components of a mixture a mixture GWP weights.
type GWPConvention string

// Blend GWP conventions. Both are reported, labelled.
const (
	// ConventionAllComponents weights every component that has a GWP in the set (the EU
	// F-gas method, Regulation (EU) No 517/2014 Annex IV; hydrocarbons and HFOs add a little).
	ConventionAllComponents GWPConvention = "all-components"
	// ConventionAnnexFOnly weights only the Annex F (HFC) components, as the Protocol's CO2-eq
	// consumption counts; HCFC components count in ODP tonnes in their own group.
	ConventionAnnexFOnly GWPConvention = "annex-f-only"
)

var conventionWords = newWordSet("GWP convention", "gwpconvention",
	[]GWPConvention{ConventionAllComponents, ConventionAnnexFOnly},
	map[string]GWPConvention{"all": ConventionAllComponents, "annex f": ConventionAnnexFOnly, "protocol": ConventionAnnexFOnly})

// GWPConventions lists the conventions.
func GWPConventions() []GWPConvention {
	return []GWPConvention{ConventionAllComponents, ConventionAnnexFOnly}
}

// ParseGWPConvention reads a convention: "all-components", "annex-f-only",
// "GWP_CONVENTION_ANNEX_F_ONLY". Empty text gives "" and no error.
func ParseGWPConvention(s string) (GWPConvention, error) { return conventionWords.parse(s) }

var hsEditionWords = newWordSet("HS edition", "hsedition", []HSEdition{HS2017, HS2022},
	map[string]HSEdition{"2017": HS2017, "2022": HS2022})

// ParseHSEdition reads an HS edition: "HS2022", "HS 2022", "2022", "HS_EDITION_HS_2022".
// Empty text gives "" and no error.
func ParseHSEdition(s string) (HSEdition, error) { return hsEditionWords.parse(s) }

// BlendType says how a blend behaves and how ASHRAE 34 numbers it.
type BlendType string

// Blend types.
const (
	BlendZeotrope  BlendType = "zeotrope"  // ASHRAE 34 400 series
	BlendAzeotrope BlendType = "azeotrope" // ASHRAE 34 500 series
	BlendMixture   BlendType = "mixture"   // a traded mixture without an ASHRAE 34 number, e.g. a fumigant
)

var blendTypeWords = newWordSet("blend type", "blendtype", []BlendType{BlendZeotrope, BlendAzeotrope, BlendMixture},
	map[string]BlendType{"zeotropic": BlendZeotrope, "azeotropic": BlendAzeotrope})

// BlendTypes lists the blend types.
func BlendTypes() []BlendType { return []BlendType{BlendZeotrope, BlendAzeotrope, BlendMixture} }

// ParseBlendType reads a blend type: "zeotrope", "azeotropic", "BLEND_TYPE_MIXTURE". Empty
// text gives "" and no error.
func ParseBlendType(s string) (BlendType, error) { return blendTypeWords.parse(s) }
