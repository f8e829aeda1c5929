package substances

import (
	"embed"
	"errors"
	"fmt"
	"io/fs"
)

// seedFiles holds the seed catalogue: Annex entries, uncontrolled blend components, blends and
// the publications their values come from.
//
//go:embed data/*.csv
var seedFiles embed.FS

// Seed file names inside seedFiles.
const (
	seedAnnexFile      = "data/annex.csv"
	seedComponentsFile = "data/components.csv"
	seedBlendsFile     = "data/blends.csv"
	seedSourcesFile    = "data/sources.csv"
)

// ErrSeed is wrapped by every error about the embedded seed files.
var ErrSeed = errors.New("invalid seed data")

// SeedError names the seed file, line and field of a value that cannot be used.
type SeedError struct {
	File  string // e.g. "data/annex.csv"
	Line  int    // 1-based line of the record in the file
	Field string // column name
	Err   error  // what is wrong
}

func (e *SeedError) Error() string {
	return fmt.Sprintf("seed file %s line %d, field %s: %v", e.File, e.Line, e.Field, e.Err)
}

// Unwrap returns the underlying error.
func (e *SeedError) Unwrap() error { return e.Err }

// Is makes errors.Is(err, ErrSeed) hold for every SeedError.
func (e *SeedError) Is(target error) bool { return target == ErrSeed }

// substanceColumns are the columns of annex.csv and components.csv.
var substanceColumns = []string{"designation", "synonyms", "chemical_name", "formula", "structure",
	"treaty_formula", "cas", "cas_src", "group", "odp", "odp_low", "odp_high", "odp_src", "isomers",
	"isomers_src", "gwp_mp", "gwp_mp_src", "gwp_ar4", "gwp_ar4_src", "gwp_ar5", "gwp_ar5_src",
	"gwp_ar6", "gwp_ar6_src", "lifetime", "lifetime_src", "hs2017", "hs2022", "hs_src", "safety",
	"safety_src", "note"}

// blendColumns are the columns of blends.csv.
var blendColumns = []string{"designation", "synonyms", "type", "components", "mass_pct", "tol_plus",
	"tol_minus", "composition_src", "tolerance_src", "safety", "safety_src", "note"}

// compositionTolerance is how far a composition may sum away from 100 mass %.
const compositionTolerance = 0.01

// Seed parses the embedded seed files into substances and blends. It computes each molar mass
// from the formula and checks every row: the formula parses and is in Hill order, a structure
// or treaty formula has the same atoms, the CAS check digit holds, a designation that the
// ASHRAE 34 rule decodes gives the same formula, HS subheadings exist, each value names its
// source, and each blend's components exist and sum to 100 ± 0.01 %. Errors are *SeedError
// values naming the file, line and field.
func Seed() ([]Substance, []Blend, error) { return seedFrom(seedFiles) }

// seedFrom reads the seed files from fsys.
func seedFrom(fsys fs.FS) ([]Substance, []Blend, error) {
	sources, err := readSeedSources(fsys)
	if err != nil {
		return nil, nil, err
	}
	annex, err := readSeedSubstances(fsys, seedAnnexFile, sources, true)
	if err != nil {
		return nil, nil, err
	}
	others, err := readSeedSubstances(fsys, seedComponentsFile, sources, false)
	if err != nil {
		return nil, nil, err
	}
	subs := append(annex, others...)
	known := make(map[string]bool, len(subs))
	for _, s := range subs {
		known[s.Designation] = true
	}
	blends, err := readSeedBlends(fsys, seedBlendsFile, sources, known)
	if err != nil {
		return nil, nil, err
	}
	return subs, blends, nil
}

func readSeedSources(fsys fs.FS) (map[string]string, error) {
	t, err := openSeedTable(fsys, seedSourcesFile, []string{"code", "citation"})
	if err != nil {
		return nil, err
	}
	m := map[string]string{}
	for {
		ok, err := t.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			return m, nil
		}
		code, cite := t.get("code"), t.get("citation")
		if code == "" || cite == "" {
			return nil, t.fail("code", "code and citation are both required")
		}
		if _, dup := m[code]; dup {
			return nil, t.fail("code", "code %q listed twice", code)
		}
		m[code] = cite
	}
}
