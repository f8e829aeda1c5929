package validate

import (
	"fmt"
	"hash/maphash"
	"slices"
	"strings"
	"time"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// Figures are the computed quantities of a record.
type Figures struct {
	Designation string          // the catalogue entry the record resolved to, or "mixture: ..." for an ad-hoc composition
	Kind        substances.Kind // substance or blend (an ad-hoc composition counts as a blend)
	NetMassKg   float64         // after exact unit conversion and container count
	ODPTonnes   float64         // sum over components, each in its own Annex group
	CO2eTonnes  float64         // CO2-eq tonnes as the Protocol counts them (Annex F components)
	Components  []substances.ComponentFigures
	// CountsInConsumption is false for records the Protocol leaves out of calculated
	// consumption: nothing controlled, transit, used/recycled/reclaimed material, feedstock,
	// destruction, process agents, QPS, and exports to a partner bound for none of the
	// shipment's controlled groups (see PartnerNotBoundGroups for a partner bound for some).
	CountsInConsumption bool
	// PartnerNonParty is true when the partner is not bound by the control measures of a
	// group in the shipment on the declaration date.
	PartnerNonParty bool
	// PartnerNotBoundGroups lists those groups, in component order. Party status is per
	// Annex group (Article 4 para 9): an export of a blend to a Party bound for some of its
	// groups deducts only the components of the groups the partner is bound for (Article 3
	// para 1(c)).
	PartnerNotBoundGroups []substances.Group
	SafetyClass           string   // ASHRAE 34 class of the substance or blend
	Cautions              []string // safety cautions from the catalogue
	// Mass is the declared quantity the net mass comes from, for the exact figures
	// (Exacts); the float64 figures above are their nearest floats, for the rules.
	Mass Quantity
	// Exact, when set, holds the exact figures (a verdict read back from the wire);
	// nil for a verdict the checker made, whose Exacts computes them from Mass.
	Exact *FiguresExact
}

// PartnerBoundFor reports whether the partner is bound for group g (an uncontrolled
// component, group "", counts as bound: nothing is banned or deducted for it anyway).
func (f *Figures) PartnerBoundFor(g substances.Group) bool {
	return !slices.Contains(f.PartnerNotBoundGroups, g)
}

// LineDraw is what a record draws on one quota line, in the line's unit.
type LineDraw struct {
	LicenceNumber string
	LineNumber    int
	Unit          terms.QuotaUnit
	Amount        float64
}

// Verdict is the answer for one record.
type Verdict struct {
	RecordKey   string
	Line        int64
	Outcome     Outcome
	Findings    []Finding // errors first, then warnings, then notices
	Resolved    bool      // Figures are computed (the substance or composition resolved)
	Figures     Figures
	Fingerprint string     // Fingerprint of the record; empty in the verdicts of a Batch (check mode)
	Draws       []LineDraw // quota draws of an accepted record; nil when rejected
	Replayed    bool       // set by Batch: an identical record with this key came earlier
	// Measurement is the comparison of the record's measured composition with the catalogue
	// and the declaration; nil when the record carries none or it could not be read.
	Measurement *substances.Analysis
}

// Add appends findings (for example a finding the store reports at commit time), re-sorts
// them and recomputes the outcome; a record that becomes rejected loses its draws.
func (v *Verdict) Add(fs ...Finding) {
	v.Findings = append(v.Findings, fs...)
	sortFindings(v.Findings)
	v.Outcome = OutcomeOf(v.Findings)
	if v.Outcome == OutcomeRejected {
		v.Draws = nil
	}
}

// maxKeyBytes is the longest record key accepted.
const maxKeyBytes = 128

// checker carries one record through the rules.
type checker struct {
	env    *Env
	r      *Record
	ledger QuotaLedger
	fs     []Finding

	netKg   float64
	mass    Quantity
	qtyOK   bool
	date    time.Time
	dateOK  bool
	partner string // upper-case, valid shape

	designation string // resolved entry
	kind        substances.Kind
	sub         *substances.Substance
	blend       *substances.Blend
	adHoc       bool

	ev     substances.Evaluation
	evOK   bool
	groups []substances.Group // controlled groups in the shipment, in component order

	lic             *Licence
	partnerNonParty bool
	notBound        []substances.Group // groups the partner is not bound for, in component order
	draws           []LineDraw

	fp            string               // the record's Fingerprint (when seed is nil)
	seed          *maphash.Seed        // set by a Batch: contentHash instead of Fingerprint
	fpHash        uint64               // contentHash(*seed, r)
	parsed        parsedContent        // what quantityRules parsed, shared with the content hash
	noFingerprint bool                 // CheckUnkeyed: neither fp nor fpHash is needed
	boundsFailed  bool                 // a bound was broken: no further rule ran
	measurement   *substances.Analysis // measurementRules' comparison
	counts        bool                 // the record counts in consumption (purposeRules)
	// Where the quota is judged (quotaRules): the findings before it, the draws planned,
	// and whether the record got that far.
	quotaAt  int
	planned  []LineDraw
	quotaDue bool
}

func (c *checker) add(code, field, format string, args ...any) {
	if c.fs == nil {
		c.fs = make([]Finding, 0, 4)
	}
	msg := format
	if len(args) > 0 {
		msg = fmt.Sprintf(format, args...)
	}
	c.fs = append(c.fs, newFinding(code, field, msg))
}

// Check runs every rule on one record and returns its verdict. env must pass Validate.
// ledger tracks the quota drawn by earlier accepted records of the same stream (check mode);
// pass nil when the caller draws quota itself (the store, under row locks, in record mode).
// Check does not look for duplicate keys: Batch does that for a stream, the store for what
// is recorded.
func Check(env *Env, r *Record, ledger QuotaLedger) Verdict {
	c := checker{env: env, r: r}
	c.rules()
	return c.finish(ledger)
}

// CheckUnkeyed is Check for a caller that needs no Fingerprint (a check of a record whose
// key is not stored: nothing will be compared with it): the verdict's Fingerprint is
// empty, and the SHA-256 over the record's content is not computed. Every other part of
// the verdict is Check's.
func CheckUnkeyed(env *Env, r *Record, ledger QuotaLedger) Verdict {
	c := checker{env: env, r: r, noFingerprint: true}
	c.rules()
	return c.finish(ledger)
}

// rules runs every rule that does not depend on the quota earlier records drew: they are
// pure (the environment is only read), so the records of one message may go through them
// in parallel. finish then judges the quota and makes the verdict.
func (c *checker) rules() {
	c.env.prepare()
	c.recordRules()
	if !c.boundsRules() {
		c.boundsFailed = true
		c.fingerprint(nil)
		return
	}
	c.quantityRules()
	c.fingerprint(&c.parsed) // after quantityRules: the content reuses what it parsed
	c.dateRules()
	c.partnerShape()
	c.identity()
	shares, compOK := c.mixtureRules()
	c.evaluate(shares, compOK)
	c.casRule()
	c.hsRule()
	c.formulaRule()
	c.measurement = c.measurementRules()
	controlled := len(c.groups) > 0
	if c.evOK && !controlled {
		c.add(CodeSubstNotControlled, "", "%s contains no substance controlled by the Montreal Protocol; licence, quota, partner and phase-out checks do not apply under the Protocol", c.designation)
	}
	if controlled {
		c.partnerRules()
		c.licenceRules()
		c.phaseOutRules()
	}
	c.counts = c.purposeRules(controlled)
}

// fingerprint sets the record's content hash (a Batch) or Fingerprint (otherwise, unless
// none is needed); pre is what the rules parsed already, nil when they stopped before.
func (c *checker) fingerprint(pre *parsedContent) {
	switch {
	case c.seed != nil:
		c.fpHash = contentHash(*c.seed, c.r, pre)
	case !c.noFingerprint:
		c.fp = fingerprintOf(c.r, pre)
	}
}

// finish judges the quota against ledger (nil: only the licence's own balance), makes the
// verdict, and draws an accepted record's quota on ledger.
func (c *checker) finish(ledger QuotaLedger) Verdict {
	r := c.r
	if c.boundsFailed {
		v := Verdict{RecordKey: r.Key, Line: r.Line, Fingerprint: c.fp}
		sortFindings(c.fs)
		v.Outcome = OutcomeOf(c.fs)
		v.Findings = capFindings(c.fs)
		return v
	}
	c.ledger = ledger
	c.quotaRules()
	v := Verdict{RecordKey: r.Key, Line: r.Line, Fingerprint: c.fp, Measurement: c.measurement}
	if c.evOK {
		v.Resolved = true
		v.Figures = Figures{
			Designation:           c.designation,
			Kind:                  c.ev.Kind,
			NetMassKg:             c.ev.NetMassKg,
			ODPTonnes:             c.ev.ODPTonnes,
			CO2eTonnes:            c.ev.CO2eTonnes,
			Components:            c.ev.Components,
			CountsInConsumption:   c.counts,
			PartnerNonParty:       c.partnerNonParty,
			PartnerNotBoundGroups: c.notBound,
			SafetyClass:           c.ev.SafetyClass,
			Cautions:              c.ev.Cautions,
			Mass:                  c.mass,
		}
	}
	sortFindings(c.fs)
	v.Outcome = OutcomeOf(c.fs)
	v.Findings = capFindings(c.fs)
	if v.Outcome != OutcomeRejected {
		v.Draws = c.draws
		if ledger != nil {
			for _, d := range c.draws {
				ledger.Draw(d.LicenceNumber, d.LineNumber, d.Amount)
			}
		}
	}
	return v
}

// recordRules: key, company, direction and the fields a reader could not convert.
func (c *checker) recordRules() {
	r := c.r
	key := strings.TrimSpace(r.Key)
	switch {
	case key == "":
		c.add(CodeKeyMissing, "", "record_key is empty; give the record a key unique per company")
	case len(key) > maxKeyBytes:
		c.add(CodeKeyInvalid, "", "record_key is %d bytes long; at most %d are accepted", len(key), maxKeyBytes)
	default:
		if p := TextProblem(key); p != "" {
			c.add(CodeKeyInvalid, "", "record_key %s; %s", p, textAccepted)
		}
	}
	if strings.TrimSpace(r.CompanyID) == "" {
		c.add(CodeCompanyMissing, "", "company_id is empty; give the registered identifier of the declaring company")
	}
	unreadableDirection := false
	for _, u := range r.Unreadable {
		if u.Field == "direction" {
			unreadableDirection = true
		}
		c.add(CodeFieldUnreadable, u.Field, "%s: %s", u.Field, u.Reason)
	}
	switch {
	case r.Direction > terms.DirectionUnspecified && r.Direction <= terms.DirectionTransit:
	case r.Direction == terms.DirectionUnspecified && unreadableDirection:
	case r.Direction != terms.DirectionUnspecified:
		c.add(CodeFieldUnreadable, "direction", "direction %d is not a known direction number; accepted: 1 (import), 2 (export), 3 (re-export), 4 (transit)", int(r.Direction))
	default:
		c.add(CodeDirectionMissing, "", "direction is not declared; accepted: import, export, re-export, transit")
	}
	if r.Purpose < terms.PurposeUnspecified || r.Purpose > terms.PurposeMedicalAerosolBurns {
		c.add(CodeFieldUnreadable, "purpose", "purpose %d is not a known purpose number", int(r.Purpose))
	}
	if r.Condition < terms.ConditionUnspecified || r.Condition > terms.ConditionReclaimed {
		c.add(CodeFieldUnreadable, "condition", "condition %d is not a known condition number", int(r.Condition))
	}
}

// evaluate computes the figures of the resolved entry or the ad-hoc composition.
func (c *checker) evaluate(shares []substances.Share, compOK bool) {
	mass := 0.0
	if c.qtyOK {
		mass = c.netKg
	}
	var err error
	switch {
	case c.designation != "":
		c.ev, err = c.env.Catalogue.Evaluate(c.designation, mass)
	case c.adHoc && compOK:
		c.ev, err = c.env.Catalogue.EvaluateShares(shares, mass)
		if err == nil {
			c.designation = adHocName(c.ev.Components)
			c.add(CodeMixAdHoc, "", "no substance is named; figures come from the declared composition (%s)", c.designation)
		}
	default:
		return
	}
	if err != nil {
		// The catalogue refused what the rules above accepted: report it rather than hide it.
		c.add(CodeSubstUnknown, "", "the catalogue could not evaluate %q: %v", c.designation, err)
		return
	}
	c.evOK = true
	for i := range c.ev.Components {
		g := c.ev.Components[i].Group
		if !g.Controlled() {
			continue
		}
		dup := false
		for _, h := range c.groups {
			if h == g {
				dup = true
				break
			}
		}
		if !dup {
			if c.groups == nil {
				c.groups = make([]substances.Group, 0, 2)
			}
			c.groups = append(c.groups, g)
		}
	}
}

// adHocName labels an ad-hoc composition: "mixture: HFC-32/HFC-125 50/50".
func adHocName(comps []substances.ComponentFigures) string {
	var names, pcts []string
	for _, cf := range comps {
		names = append(names, cf.Designation)
		pcts = append(pcts, fmt.Sprintf("%g", cf.MassPct))
	}
	return "mixture: " + strings.Join(names, "/") + " " + strings.Join(pcts, "/")
}

func (c *checker) hasGroup(g substances.Group) bool {
	for _, h := range c.groups {
		if h == g {
			return true
		}
	}
	return false
}

var groupNames = map[substances.Group]string{
	substances.GroupAI: "CFCs", substances.GroupAII: "halons", substances.GroupBI: "other fully halogenated CFCs",
	substances.GroupBII: "carbon tetrachloride", substances.GroupBIII: "methyl chloroform",
	substances.GroupCI: "HCFCs", substances.GroupCII: "HBFCs", substances.GroupCIII: "bromochloromethane",
	substances.GroupEI: "methyl bromide", substances.GroupFI: "HFCs", substances.GroupFII: "HFC-23",
}

// groupLabel names a group for messages: "Annex C/I (HCFCs)".
func groupLabel(g substances.Group) string {
	name := groupNames[g]
	if name == "" {
		return "Annex " + string(g)
	}
	return "Annex " + string(g) + " (" + name + ")"
}
