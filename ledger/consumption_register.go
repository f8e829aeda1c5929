package ledger

import (
	"context"
	"errors"

	"github.com/halovet/halovet/controls"
	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/terms"
)

// The consumption, report and quota-planning workflows read the register through
// Reports and write drafts through DraftIssuer; the server adapts its store to both.

// ErrNoReportingParty: no country is configured as the reporting Party.
var ErrNoReportingParty = errors.New("no reporting Party is configured")

// OfficialFigure is a baseline (Year 0) or a year's limit as officially set.
type OfficialFigure struct {
	Key         string
	CountryCode string
	Kind        string // "baseline" or "limit"
	Scope       string // Annex group or "F"
	Year        int
	Value       exact.Decimal
	Unit        string // "ODP t" or "CO2-eq t"
	Source      string
}

// Exemption is one authorised exemption of one Party, scope and year.
type Exemption struct {
	Key         string
	CountryCode string
	Year        int
	Scope       string
	Use         string // essential, critical, laboratory, high-ambient-temperature
	Amount      exact.Decimal
	Unit        string // "ODP t" or "CO2-eq t"
	Source      string
	Note        string
}

// ShipmentLine is the mass of one substance in the recorded shipments of one year that
// share partner, direction, purpose, condition and partner status, with the ids of the
// shipments behind it.
type ShipmentLine struct {
	Year            int
	PartnerCountry  string
	Designation     string
	AnnexGroup      string
	Direction       terms.Direction
	Purpose         terms.Purpose
	Condition       terms.Condition
	PartnerNonParty bool
	Tonnes          exact.Decimal
	ShipmentIDs     []int64
}

// HFC23Entry is one facility's HFC-23 by-product in one year, metric tonnes.
type HFC23Entry struct {
	Key          string
	Facility     string
	Year         int
	Generated    exact.Decimal
	CapturedUsed exact.Decimal
	Destroyed    exact.Decimal
	Emitted      exact.Decimal
	Note         string
}

// CompanyAmount is one company's amount in one year.
type CompanyAmount struct {
	CompanyID string
	Year      int
	Amount    exact.Decimal
}

// ReportReader reads the register inside one snapshot.
type ReportReader interface {
	// ShipmentTotals sums the recorded shipment components of the years (every year when
	// years is nil).
	ShipmentTotals(ctx context.Context, years []int) ([]controls.ShipmentTotal, error)
	// ShipmentYears lists the years with a recorded shipment, in order.
	ShipmentYears(ctx context.Context) ([]int, error)
	// NationalTotals sums the national entries of the years (every year when nil).
	NationalTotals(ctx context.Context, years []int) ([]controls.NationalTotal, error)
	// ReportingParty returns the reporting Party; the error wraps ErrNoReportingParty
	// when there is none.
	ReportingParty(ctx context.Context) (Party, error)
	// OfficialFigures returns every official figure.
	OfficialFigures(ctx context.Context) ([]OfficialFigure, error)
	// Exemptions returns the authorised exemptions of one year (every year when 0).
	Exemptions(ctx context.Context, year int) ([]Exemption, error)
	// ShipmentLines sums one year's recorded shipment components per partner, substance,
	// direction, purpose, condition and partner status; the same rows as ShipmentTotals.
	ShipmentLines(ctx context.Context, year int) ([]ShipmentLine, error)
	// PartnerExports returns the partners' export figures of one year.
	PartnerExports(ctx context.Context, year int) ([]PartnerExport, error)
	// YearClosed reports whether a reporting year is closed, and since when and why.
	YearClosed(ctx context.Context, year int) (ClosedYear, bool, error)
	// HFC23Entries returns the facility entries of one year.
	HFC23Entries(ctx context.Context, year int) ([]HFC23Entry, error)
	// CompanyImports sums per company and year the recorded imports counting in
	// consumption of the components in groups, in a quota unit (ODP or CO2-eq tonnes).
	CompanyImports(ctx context.Context, groups []string, unit terms.QuotaUnit, years []int) ([]CompanyAmount, error)
}

// Reports gives each report one read-only snapshot of the register.
type Reports interface {
	// Snapshot runs fn with a reader on one consistent, read-only state of the register.
	Snapshot(ctx context.Context, fn func(ReportReader) error) error
}

// DraftLicence is one draft import licence of a quota plan: one quota line.
type DraftLicence struct {
	Number     string
	CompanyID  string
	Year       int             // valid from 1 January to 31 December
	AnnexGroup string          // of the quota line
	Unit       terms.QuotaUnit // ODP or CO2-eq tonnes
	Quota      exact.Decimal
}

// NotDraftError: a licence of a draft's number exists and is no longer a draft.
type NotDraftError struct{ Number, Status string }

func (e *NotDraftError) Error() string {
	return "licence " + e.Number + " exists and is " + e.Status + ", not a draft"
}

// UnknownCompanyError: a draft is for a company that is not registered.
type UnknownCompanyError struct{ CompanyID string }

func (e *UnknownCompanyError) Error() string { return "company " + e.CompanyID + " is not registered" }

// DraftIssuer stores the drafts of one plan.
type DraftIssuer interface {
	// IssueDrafts stores every draft in one transaction: a new number is issued, one that
	// is still a draft amended, under a lock that holds until commit. A number that is no
	// longer a draft fails the whole plan with a *NotDraftError, an unregistered company
	// with an *UnknownCompanyError; then nothing is stored.
	IssueDrafts(ctx context.Context, drafts []DraftLicence, reason string) error
}
