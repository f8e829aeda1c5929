package validate

import (
	"errors"
	"fmt"
	"slices"
	"sync"
	"time"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// PartySettings is what the checks need to know about one country.
type PartySettings struct {
	Type     terms.PartyType
	HFCGroup terms.HFCGroup
	// BoundFrom gives, per Annex group, the date from which the country is bound by that
	// group's control measures. A group absent here does not bind the country: for trade in
	// that group it counts as a non-Party (Article 4 para 9).
	BoundFrom map[substances.Group]time.Time
	// Known is true for settings the authority has entered; a zero PartySettings (Known
	// false) means "nothing is known about this country".
	Known bool
}

// BoundOn reports whether the country is bound by group g's control measures on day d. A
// country whose Type is PartyTypeNonParty is bound by none, whatever BoundFrom says.
func (p PartySettings) BoundOn(g substances.Group, d time.Time) bool {
	if p.Type == terms.PartyTypeNonParty {
		return false
	}
	from, ok := p.BoundFrom[g]
	return ok && !d.Before(day(from))
}

// QuotaLine is one quota of a licence. Its scope is one substance (Substance), one Annex group
// (Group) or a whole Annex (Annex, only "F": the HFC phase-down of Article 2J counts Annex F's
// two groups together in CO2-eq tonnes); a substance line is more specific than a group line,
// a group line than an Annex line. A line with Purposes draws only shipments declaring one of
// them (an allowance for an exempted use, for example critical uses of methyl bromide) and is
// preferred to a line without.
type QuotaLine struct {
	LineNumber int
	Group      substances.Group // scope by Annex group; empty when Substance or Annex is set
	Annex      string           // scope by a whole Annex ("F"); empty otherwise
	Substance  string           // scope by substance designation; empty for a group or Annex line
	Purposes   []terms.Purpose  // the declared purposes the line serves; empty: every purpose
	Unit       terms.QuotaUnit
	Allocated  float64 // in Unit
	Drawn      float64 // in Unit, by shipments already recorded
	// Closed: the line takes no further draws (it was closed, and another line may have
	// been opened in its place); PlanDraws passes it over.
	Closed bool
}

// StatusPeriod is a licence's status from a day on, until the next period.
type StatusPeriod struct {
	From   time.Time // first day
	Status terms.LicenceStatus
}

// WholeAnnexF is the one Annex a quota line may cover as a whole.
const WholeAnnexF = "F"

// Serves reports whether the line may be drawn by a shipment declaring purpose p.
func (l QuotaLine) Serves(p terms.Purpose) bool {
	return len(l.Purposes) == 0 || slices.Contains(l.Purposes, p)
}

// Licence is an import or export licence with its quota lines.
type Licence struct {
	Number          string
	CompanyID       string
	Directions      []terms.Direction
	ValidFrom       time.Time           // first day of validity
	ValidTo         time.Time           // last day of validity; the zero time means open-ended
	Status          terms.LicenceStatus // as it stands after its last status change
	SpecialPurposes []terms.Purpose     // purposes allowed besides ordinary use (feedstock, destruction, ...)
	QuotaLines      []QuotaLine
	// StatusHistory is the licence's status from each day on, in date order; empty means
	// Status throughout. A declaration is judged by the status on its date (StatusOn).
	StatusHistory []StatusPeriod
	// Version counts the licence's changes in the register (amendments, status changes,
	// closed lines); a record judged on one version is written only while it still stands.
	Version int
}

// StatusOn returns the licence's status on day d: that of the last period of its history
// starting on or before d; before the first period, the first period's status (a day
// before the licence was issued is outside its validity, judged apart); Status when the
// history is empty.
func (lic *Licence) StatusOn(d time.Time) terms.LicenceStatus {
	if len(lic.StatusHistory) == 0 {
		return lic.Status
	}
	st := lic.StatusHistory[0].Status
	for _, p := range lic.StatusHistory {
		if day(p.From).After(day(d)) {
			break
		}
		st = p.Status
	}
	return st
}

// DefaultFutureToleranceDays is how many days after today NewEnv lets a declaration date lie
// (a declaration lodged ahead of arrival, and time zones; common practice).
const DefaultFutureToleranceDays = 2

// Env holds what the checks need. It is read-only during checking and safe for concurrent
// use by many goroutines once built; build it with NewEnv or as a literal, then call Validate.
type Env struct {
	// Catalogue is the immutable catalogue snapshot identifiers resolve against.
	Catalogue *substances.Catalogue
	// ReportingParty is the ISO 3166-1 alpha-2 code of the Party running the service.
	ReportingParty string
	// Parties holds the settings of every known country, keyed by upper-case alpha-2 code.
	Parties map[string]PartySettings
	// Licence looks a licence up by number (as declared, trimmed). It must be safe for
	// concurrent use.
	Licence func(number string) (*Licence, bool)
	// AllowedPercent gives the reporting Party's allowed consumption of group g in year, as a
	// percentage of its baseline, and whether a schedule is known. Package controls owns the
	// schedules; this package only asks.
	AllowedPercent func(g substances.Group, year int) (pct float64, known bool)
	// Now is the clock; nil means time.Now.
	Now func() time.Time
	// FutureToleranceDays is how many days after today a declaration date may lie (0: none).
	FutureToleranceDays int

	once     sync.Once
	hsCount  map[hsKey]int                 // how many catalogue substances list each subheading
	formulas map[string]substances.Formula // parsed formula of each substance, by designation
}

type hsKey struct {
	edition substances.HSEdition
	code    string
}

// NewEnv returns an Env with the default future tolerance and the system clock.
func NewEnv(cat *substances.Catalogue, reportingParty string, parties map[string]PartySettings,
	licence func(string) (*Licence, bool), allowed func(substances.Group, int) (float64, bool)) *Env {
	return &Env{
		Catalogue:           cat,
		ReportingParty:      reportingParty,
		Parties:             parties,
		Licence:             licence,
		AllowedPercent:      allowed,
		Now:                 time.Now,
		FutureToleranceDays: DefaultFutureToleranceDays,
	}
}

// ErrEnv is wrapped by Validate's errors.
var ErrEnv = errors.New("incomplete check environment")

// Validate reports what is missing from the environment.
func (e *Env) Validate() error {
	switch {
	case e == nil:
		return fmt.Errorf("%w: nil", ErrEnv)
	case e.Catalogue == nil:
		return fmt.Errorf("%w: Catalogue is nil", ErrEnv)
	case !isAlpha2(e.ReportingParty):
		return fmt.Errorf("%w: ReportingParty %q is not an ISO 3166-1 alpha-2 code", ErrEnv, e.ReportingParty)
	case e.Licence == nil:
		return fmt.Errorf("%w: Licence lookup is nil", ErrEnv)
	case e.AllowedPercent == nil:
		return fmt.Errorf("%w: AllowedPercent is nil", ErrEnv)
	case e.FutureToleranceDays < 0:
		return fmt.Errorf("%w: FutureToleranceDays %d is negative", ErrEnv, e.FutureToleranceDays)
	}
	for code := range e.Parties {
		if !isAlpha2(code) || upper2(code) != code {
			return fmt.Errorf("%w: Parties key %q is not an upper-case ISO 3166-1 alpha-2 code", ErrEnv, code)
		}
	}
	return nil
}

func (e *Env) today() time.Time {
	if e.Now == nil {
		return day(time.Now())
	}
	return day(e.Now())
}

// prepare builds the indexes derived from the catalogue, once.
func (e *Env) prepare() {
	e.once.Do(func() {
		e.hsCount = map[hsKey]int{}
		e.formulas = map[string]substances.Formula{}
		for _, s := range e.Catalogue.Substances() {
			if f, err := substances.ParseFormula(s.Formula); err == nil {
				e.formulas[s.Designation] = f
			}
			for _, c := range s.HS2017 {
				e.hsCount[hsKey{substances.HS2017, c}]++
			}
			for _, c := range s.HS2022 {
				e.hsCount[hsKey{substances.HS2022, c}]++
			}
		}
	})
}

// ShareIndexes lets e use the indexes derived from the catalogue (parsed formulas, HS
// subheading counts) that from holds, building them in from first if need be, when both
// environments hold the same catalogue snapshot. An environment rebuilt for new parties or
// licences, or narrowed for one caller, then costs no scan of the catalogue. It does
// nothing when the catalogues differ or e has been used already; call it before e is used.
func (e *Env) ShareIndexes(from *Env) {
	if from == nil || from == e || from.Catalogue != e.Catalogue {
		return
	}
	from.prepare()
	e.once.Do(func() { e.hsCount, e.formulas = from.hsCount, from.formulas })
}

// formula returns the parsed formula of a catalogue substance.
func (e *Env) formula(s *substances.Substance) (substances.Formula, bool) {
	f, ok := e.formulas[s.Designation]
	return f, ok
}

func isAlpha2(s string) bool {
	return len(s) == 2 && isLetter(s[0]) && isLetter(s[1])
}

func isLetter(c byte) bool { return c >= 'A' && c <= 'Z' || c >= 'a' && c <= 'z' }

// upper2 upper-cases a two-letter code without allocating for upper-case input.
func upper2(s string) string {
	if len(s) == 2 && s[0] >= 'A' && s[0] <= 'Z' && s[1] >= 'A' && s[1] <= 'Z' {
		return s
	}
	b := []byte(s)
	for i, c := range b {
		if c >= 'a' && c <= 'z' {
			b[i] = c - ('a' - 'A')
		}
	}
	return string(b)
}
