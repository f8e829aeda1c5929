package validate

import (
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// QuotaLedger tracks what earlier records of one stream drew on quota lines, on top of the
// Drawn amounts the licences were loaded with. A batch check (check mode) passes one ledger
// through every record so that the second of two shipments is judged against what the first
// left; the store does the authoritative draw under row locks when recording and passes nil.
type QuotaLedger interface {
	// Drawn returns what earlier accepted records of the stream drew on the line.
	Drawn(licence string, line int) float64
	// Draw adds an accepted record's draw.
	Draw(licence string, line int, amount float64)
}

// DeferQuota is the QuotaLedger of a caller that judges the quota balance itself, at the
// moment the record draws (the store, under row locks, in record mode): Check then plans
// the draws of an accepted record but gives no QUOTA_EXCEEDED or QUOTA_NEAR_LIMIT; the
// caller adds them with QuotaFindings from the balance it drew on. It draws nothing.
var DeferQuota QuotaLedger = deferQuota{}

type deferQuota struct{}

func (deferQuota) Drawn(string, int) float64 { return 0 }
func (deferQuota) Draw(string, int, float64) {}

// QuotaFindings are the quota findings of a draw of amount on line (of the licence
// numbered licence) with allocated allocated and used already drawn before it, all in the
// line's unit: QUOTA_EXCEEDED when it draws more than is left, QUOTA_NEAR_LIMIT when
// afterwards more than 90 % of the line is used, none otherwise. Check mode and record
// mode word them alike; record mode passes the balance as of the record's own draw.
func QuotaFindings(licence string, line QuotaLine, allocated, used, amount float64) []Finding {
	remaining := allocated - used
	if amount > remaining+quotaEpsilon {
		return []Finding{newFinding(CodeQuotaExceeded, "", fmt.Sprintf("the shipment draws %s %s on quota line %d (%s) of licence %s, but only %s %s remain of %s allocated",
			fmtAmount(amount), line.Unit.Symbol(), line.LineNumber, lineScope(line), licence, fmtAmount(math.Max(remaining, 0)), line.Unit.Symbol(), fmtAmount(allocated)))}
	}
	if allocated > 0 && (used+amount)/allocated > nearLimitShare {
		return []Finding{newFinding(CodeQuotaNearLimit, "", fmt.Sprintf("after this shipment %.1f %% of quota line %d (%s) of licence %s is used (%s of %s %s)",
			100*(used+amount)/allocated, line.LineNumber, lineScope(line), licence, fmtAmount(used+amount), fmtAmount(allocated), line.Unit.Symbol()))}
	}
	return nil
}

// MemoryLedger is a QuotaLedger in memory, for one stream; it is not safe for concurrent use.
type MemoryLedger struct {
	m map[lineRef]float64
}

type lineRef struct {
	licence string
	line    int
}

// NewMemoryLedger returns an empty ledger.
func NewMemoryLedger() *MemoryLedger { return &MemoryLedger{m: map[lineRef]float64{}} }

// Drawn implements QuotaLedger.
func (l *MemoryLedger) Drawn(licence string, line int) float64 { return l.m[lineRef{licence, line}] }

// Draw implements QuotaLedger.
func (l *MemoryLedger) Draw(licence string, line int, amount float64) {
	l.m[lineRef{licence, line}] += amount
}

// nearLimitShare is the share of a quota line's allocation above which a notice is given.
const nearLimitShare = 0.9

// quotaEpsilon absorbs binary rounding when a draw takes a line exactly to its allocation;
// the store counts in billionths of the unit.
const quotaEpsilon = 5e-10

// InScope reports whether a component falls in a quota line's scope: the line's substance
// (by catalogue designation, case-insensitive) or, for a group line, the line's Annex group.
func InScope(line QuotaLine, comp substances.ComponentFigures) bool {
	switch {
	case line.Substance != "":
		return strings.EqualFold(line.Substance, comp.Designation)
	case line.Annex != "":
		return comp.Group.Controlled() && comp.Group.Annex() == line.Annex
	}
	return line.Group.Controlled() && comp.Group == line.Group
}

// specificity ranks a line's scope: a substance line (3) before a group line (2) before an
// Annex line (1).
func (l QuotaLine) specificity() int {
	switch {
	case l.Substance != "":
		return 3
	case l.Annex != "":
		return 1
	}
	return 2
}

// componentDraw is what one component draws in a unit.
func componentDraw(u terms.QuotaUnit, comp substances.ComponentFigures) float64 {
	switch u {
	case terms.QuotaMetricTonnes:
		return comp.MassKg / 1000
	case terms.QuotaODPTonnes:
		return comp.ODPTonnes
	case terms.QuotaCO2eTonnes:
		// Mass times the Protocol GWP: equals comp.CO2eTonnes for Annex F components, and
		// uses the Kigali-listed GWP for a CFC or HCFC on a CO2-eq line.
		return comp.MassKg / 1000 * comp.ProtocolGWP
	}
	return 0
}

// Draw returns what a shipment with these figures draws on one quota line, in the line's unit:
// metric tonnes, ODP tonnes, or CO2-eq tonnes with the Protocol's GWPs. Only components in the
// line's scope count, so a blend draws on an HFC line only for its HFC components.
func Draw(line QuotaLine, fig Figures) float64 {
	sum := 0.0
	for _, comp := range fig.Components {
		if InScope(line, comp) {
			sum += componentDraw(line.Unit, comp)
		}
	}
	return sum
}

// bestLine picks the quota line a component of a shipment declaring purpose p draws on: among
// the lines in scope that serve p, a line limited to purposes before one that is not, then a
// substance line before a group line before an Annex line, then the lowest line number. It
// returns -1 when no line covers the component.
func bestLine(lic *Licence, comp substances.ComponentFigures, p terms.Purpose) int {
	best := -1
	for i, l := range lic.QuotaLines {
		if l.Closed || !InScope(l, comp) || !l.Serves(p) {
			continue
		}
		if best < 0 {
			best = i
			continue
		}
		b := lic.QuotaLines[best]
		lp, bp := len(l.Purposes) > 0, len(b.Purposes) > 0
		switch {
		case lp != bp:
			if lp {
				best = i
			}
		case l.specificity() != b.specificity():
			if l.specificity() > b.specificity() {
				best = i
			}
		case l.LineNumber < b.LineNumber:
			best = i
		}
	}
	return best
}

// PlanDraws assigns each controlled component of a shipment declaring purpose p to one quota
// line of the licence (see bestLine) and sums the draws per line, in line-number order.
// Components no line covers are returned as uncovered. The draws equal Draw(line, fig)
// whenever no two lines of the licence overlap.
func PlanDraws(lic *Licence, fig Figures, p terms.Purpose) (draws []LineDraw, uncovered []substances.ComponentFigures) {
	for _, comp := range fig.Components {
		if !comp.Group.Controlled() {
			continue
		}
		i := bestLine(lic, comp, p)
		if i < 0 {
			uncovered = append(uncovered, comp)
			continue
		}
		l := lic.QuotaLines[i]
		amount := componentDraw(l.Unit, comp)
		k := slices.IndexFunc(draws, func(d LineDraw) bool { return d.LineNumber == l.LineNumber })
		if k < 0 {
			if draws == nil {
				draws = make([]LineDraw, 0, 2)
			}
			draws = append(draws, LineDraw{LicenceNumber: lic.Number, LineNumber: l.LineNumber, Unit: l.Unit, Amount: amount})
		} else {
			draws[k].Amount += amount
		}
	}
	slices.SortFunc(draws, func(a, b LineDraw) int { return a.LineNumber - b.LineNumber })
	return draws, uncovered
}

func (lic *Licence) line(number int) (QuotaLine, bool) {
	for _, l := range lic.QuotaLines {
		if l.LineNumber == number {
			return l, true
		}
	}
	return QuotaLine{}, false
}

func (lic *Licence) coversDirection(d terms.Direction) bool {
	for _, x := range lic.Directions {
		if x == d || (d == terms.DirectionReExport && x == terms.DirectionExport) {
			return true
		}
	}
	return false
}

// allowsPurpose reports whether the licence authorises purpose p: it lists p among its special
// purposes, or one of its quota lines is an allowance limited to p.
func (lic *Licence) allowsPurpose(p terms.Purpose) bool {
	if slices.Contains(lic.SpecialPurposes, p) {
		return true
	}
	for _, l := range lic.QuotaLines {
		if len(l.Purposes) > 0 && slices.Contains(l.Purposes, p) {
			return true
		}
	}
	return false
}

// licenceRules checks the licence named by a shipment of controlled substances, its scope,
// and the quota it draws on.
func (c *checker) licenceRules() {
	r := c.r
	num := strings.TrimSpace(r.LicenceNumber)
	if num == "" {
		switch r.Direction {
		case terms.DirectionImport, terms.DirectionExport, terms.DirectionReExport:
			c.add(CodeLicenceMissing, "", "licence_number is empty; an %s of %s needs a licence (Article 4B)", r.Direction, joinGroups(c.groups))
		}
		return
	}
	lic, ok := c.env.Licence(num)
	if !ok || lic == nil {
		c.add(CodeLicenceUnknown, "", "no licence %q exists", cutText(num))
		return
	}
	c.lic = lic
	if company := strings.TrimSpace(r.CompanyID); company != "" && company != lic.CompanyID {
		c.add(CodeLicenceCompany, "", "licence %s is held by company %s, not by %s", lic.Number, lic.CompanyID, cutText(company))
	}
	if r.Direction != terms.DirectionUnspecified && !lic.coversDirection(r.Direction) {
		c.add(CodeLicenceDirection, "", "licence %s covers %s, not %s", lic.Number, directionList(lic.Directions), r.Direction)
	}
	if c.dateOK {
		// The licence as it stood on the declaration date.
		if st := lic.StatusOn(c.date); st != terms.LicenceActive {
			c.add(CodeLicenceInactive, "", "licence %s was %s on the declaration_date %s; only a licence active on that day is accepted", lic.Number, st, isoDate(c.date))
		}
	} else if lic.Status != terms.LicenceActive {
		c.add(CodeLicenceInactive, "", "licence %s is %s; only an active licence is accepted", lic.Number, lic.Status)
	}
	if c.dateOK {
		if c.date.Before(day(lic.ValidFrom)) {
			c.add(CodeLicenceNotYetValid, "", "declaration_date %s is before licence %s is valid (from %s)", isoDate(c.date), lic.Number, isoDate(lic.ValidFrom))
		}
		if !lic.ValidTo.IsZero() && c.date.After(day(lic.ValidTo)) {
			c.add(CodeLicenceExpired, "", "declaration_date %s is after licence %s expired (valid to %s)", isoDate(c.date), lic.Number, isoDate(lic.ValidTo))
		}
	}
	switch r.Purpose {
	case terms.PurposeFeedstock, terms.PurposeDestruction:
		if !lic.allowsPurpose(r.Purpose) {
			c.add(CodePurposeNotLicensed, "", "purpose %s needs a licence that lists it; licence %s lists %s", r.Purpose, lic.Number, purposeList(lic.SpecialPurposes))
		}
	}
	if !c.evOK {
		return
	}
	fig := Figures{Components: c.ev.Components}
	draws, uncovered := PlanDraws(lic, fig, r.Purpose)
	for _, comp := range uncovered {
		c.add(CodeLicenceScope, "", "no quota line of licence %s covers %s (%s)%s", lic.Number, comp.Designation, groupLabel(comp.Group), c.componentOf())
	}
	if r.Direction == terms.DirectionTransit || !c.qtyOK {
		return
	}
	// The quota the record draws is judged once the quota drawn by the earlier records of
	// the stream is known (quotaRules, from finish): the rules up to here are pure and may
	// run in parallel for the records of one message.
	c.quotaAt, c.planned, c.quotaDue = len(c.fs), draws, true
}

// quotaRules judges the planned draws against the quota left, counting what earlier
// records of the stream drew (c.ledger), and inserts its findings where licenceRules
// stopped, so that the findings keep the order of the rules.
func (c *checker) quotaRules() {
	if !c.quotaDue {
		return
	}
	lic, draws := c.lic, c.planned
	rest := slices.Clone(c.fs[c.quotaAt:])
	c.fs = c.fs[:c.quotaAt]
	for _, d := range draws {
		line, _ := lic.line(d.LineNumber)
		if line.Unit < terms.QuotaMetricTonnes || line.Unit > terms.QuotaCO2eTonnes || line.Allocated < 0 || math.IsNaN(line.Allocated) {
			c.add(CodeQuotaLineInvalid, "", "quota line %d of licence %s has unit %s and allocation %g; it cannot be drawn on", line.LineNumber, lic.Number, unitText(line.Unit), line.Allocated)
			continue
		}
		if c.ledger == DeferQuota {
			continue // the caller judges the balance at the record's own draw
		}
		earlier := 0.0
		if c.ledger != nil {
			earlier = c.ledger.Drawn(lic.Number, line.LineNumber)
		}
		fs := QuotaFindings(lic.Number, line, line.Allocated, line.Drawn+earlier, d.Amount)
		c.fs = append(c.fs, fs...)
	}
	if len(rest) > 0 {
		c.fs = append(c.fs, rest...)
	}
	c.draws = draws
}

func (c *checker) componentOf() string {
	if c.isMixture() {
		return ", a component of " + c.designation
	}
	return ""
}

func lineScope(l QuotaLine) string {
	var s string
	switch {
	case l.Substance != "":
		s = l.Substance
	case l.Annex != "":
		s = "Annex " + l.Annex + " as a whole"
	default:
		s = "Annex " + string(l.Group)
	}
	if len(l.Purposes) > 0 {
		s += " for " + purposeList(l.Purposes)
	}
	return s
}

// fmtAmount prints a quota amount with up to 9 decimals (the store's resolution).
func fmtAmount(f float64) string {
	s := strings.TrimRight(strconv.FormatFloat(f, 'f', 9, 64), "0")
	return strings.TrimSuffix(s, ".")
}

func directionList(ds []terms.Direction) string {
	if len(ds) == 0 {
		return "no direction"
	}
	parts := make([]string, len(ds))
	for i, d := range ds {
		parts[i] = d.String()
	}
	return strings.Join(parts, ", ")
}

func purposeList(ps []terms.Purpose) string {
	if len(ps) == 0 {
		return "no special purpose"
	}
	parts := make([]string, len(ps))
	for i, p := range ps {
		parts[i] = p.String()
	}
	return strings.Join(parts, ", ")
}

// unitText names a quota line's unit in a message, also when it is unspecified or unknown.
func unitText(u terms.QuotaUnit) string {
	if u == terms.QuotaUnitUnspecified {
		return "unspecified"
	}
	return u.Symbol()
}
