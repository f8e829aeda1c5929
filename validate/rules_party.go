package validate

import (
	"strings"
	"time"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// tradeBan holds the first days of the Article 4 bans on trade with non-Parties for one
// Annex group. Status tags: [V] verified in the treaty
// text, [D] derived from verified provisions (the ban starts one year after the amendment that
// added it entered into force), [U] unverified.
type tradeBan struct {
	imports time.Time // imports from non-Parties banned from this day
	exports time.Time // exports to non-Parties banned from this day
	basis   string    // provision, for messages
}

func date(y int, m time.Month, d int) time.Time { return time.Date(y, m, d, 0, 0, 0, 0, time.UTC) }

var tradeBans = func() map[substances.Group]tradeBan {
	annexA := tradeBan{date(1990, 1, 1), date(1993, 1, 1), "Article 4 paras 1 and 2"} // [V]
	// [D] London Amendment in force 1992-08-10; paras 1 bis / 2 bis apply one year later.
	annexB := tradeBan{date(1993, 8, 10), date(1993, 8, 10), "Article 4 paras 1 bis and 2 bis"}
	// [V] for the date of para 1 sept (Kigali changes to Article 4 in force 2033-01-01);
	// [U] the export ban of para 2 sept is assumed to start the same day (wording not retrieved).
	annexF := tradeBan{date(2033, 1, 1), date(2033, 1, 1), "Article 4 paras 1 sept and 2 sept"}
	return map[substances.Group]tradeBan{
		substances.GroupAI:   annexA,
		substances.GroupAII:  annexA,
		substances.GroupBI:   annexB,
		substances.GroupBII:  annexB,
		substances.GroupBIII: annexB,
		// [D] Copenhagen Amendment in force 1994-06-14; paras 1 ter / 2 ter one year later.
		substances.GroupCII: {date(1995, 6, 14), date(1995, 6, 14), "Article 4 paras 1 ter and 2 ter"},
		// [D] Montreal Amendment in force 1999-11-10; paras 1 qua / 2 qua one year later.
		substances.GroupEI: {date(2000, 11, 10), date(2000, 11, 10), "Article 4 paras 1 qua and 2 qua"},
		// [V] paras 1 quin / 2 quin: 2004-01-01.
		substances.GroupCI: {date(2004, 1, 1), date(2004, 1, 1), "Article 4 paras 1 quin and 2 quin"},
		// [D] Beijing Amendment in force 2002-02-25; paras 1 sex / 2 sex one year later.
		substances.GroupCIII: {date(2003, 2, 25), date(2003, 2, 25), "Article 4 paras 1 sex and 2 sex"},
		substances.GroupFI:   annexF,
		substances.GroupFII:  annexF,
	}
}()

// TradeBanStart returns the first day of the Article 4 ban on trade with non-Parties for
// group g in direction d (re-export counts as export; transit is not covered), and false when
// no ban applies.
func TradeBanStart(g substances.Group, d terms.Direction) (time.Time, bool) {
	b, ok := tradeBans[g]
	if !ok {
		return time.Time{}, false
	}
	switch d {
	case terms.DirectionImport:
		return b.imports, true
	case terms.DirectionExport, terms.DirectionReExport:
		return b.exports, true
	}
	return time.Time{}, false
}

// partnerShape checks the partner code's presence, shape and that it is not the reporting
// Party. It runs for every record.
func (c *checker) partnerShape() {
	p := strings.TrimSpace(c.r.PartnerCountry)
	switch {
	case p == "":
		c.add(CodePartnerMissing, "", "partner_country is empty; give the ISO 3166-1 alpha-2 code of the other country")
		return
	case !isAlpha2(p):
		c.add(CodePartnerFormat, "", "partner_country %q is not an ISO 3166-1 alpha-2 code (two letters)", cutText(p))
		return
	}
	p = upper2(p)
	if p == upper2(c.env.ReportingParty) {
		c.add(CodePartnerSelf, "", "partner_country %s is the reporting Party itself; a shipment needs another country at its other end", p)
		return
	}
	c.partner = p
}

// dateRules checks the declaration date and the future tolerance.
func (c *checker) dateRules() {
	s := strings.TrimSpace(c.r.DeclarationDate)
	if s == "" {
		c.add(CodeDateMissing, "", "declaration_date is empty; accepted: YYYY-MM-DD")
		return
	}
	d, err := ParseDate(s)
	if err != nil {
		c.add(CodeDateFormat, "", "declaration_date: %v", err)
		return
	}
	today := c.env.today()
	limit := today.AddDate(0, 0, c.env.FutureToleranceDays)
	if d.After(limit) {
		c.add(CodeDateFuture, "", "declaration_date %s is after today (%s) plus the tolerance of %d days", isoDate(d), isoDate(today), c.env.FutureToleranceDays)
	}
	c.date, c.dateOK = d, true
}

// partnerRules checks the partner's party settings and the non-Party trade bans for every
// controlled group in the shipment.
func (c *checker) partnerRules() {
	if c.partner == "" {
		return
	}
	ps, ok := c.env.Parties[c.partner]
	if !ok || !ps.Known {
		c.add(CodePartnerUnknown, "", "no party settings are held for %s, so whether it is bound by the Montreal Protocol for %s could not be checked", c.partner, joinGroups(c.groups))
		return
	}
	if !c.dateOK || c.r.Direction == terms.DirectionTransit {
		return // transit is neither import nor export; without a date nothing can be judged
	}
	for _, g := range c.groups {
		if ps.BoundOn(g, c.date) {
			continue
		}
		c.partnerNonParty = true
		c.notBound = append(c.notBound, g)
		start, hasBan := TradeBanStart(g, c.r.Direction)
		if hasBan && !c.date.Before(start) {
			verb := "imports of it from"
			if c.r.Direction.Outgoing() {
				verb = "exports of it to"
			}
			c.add(CodePartnerNonParty, "", "%s is not bound by the control measures for %s on %s; %s ban %s non-Parties from %s",
				c.partner, groupLabel(g), isoDate(c.date), tradeBans[g].basis, verb, isoDate(start))
			continue
		}
		msg := "%s is not bound by the control measures for %s on %s; the ban on trade with non-Parties for this group "
		if hasBan {
			msg += "starts " + isoDate(start)
		} else {
			msg += "does not cover this direction"
		}
		if c.r.Direction.Outgoing() {
			msg += "; the " + groupLabel(g) + " part of an export to it is not deducted from consumption (Article 3 para 1(c))"
		}
		c.add(CodePartnerNotBound, "", msg, c.partner, groupLabel(g), isoDate(c.date))
	}
}

func joinGroups(gs []substances.Group) string {
	parts := make([]string, len(gs))
	for i, g := range gs {
		parts[i] = string(g)
	}
	return "Annex " + strings.Join(parts, ", ")
}
