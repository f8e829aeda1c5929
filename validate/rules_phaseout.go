package validate

import (
	"github.com/halovet/halovet/substances"
)

// exemptPurpose says why a purpose lets an import of a phased-out group pass, or "" when it
// does not. Sources: feedstock and destruction are outside production and consumption (Art. 1
// para 5; Decisions VII/30 and IV/11); process agents (Decision X/14); QPS only for methyl
// bromide (Art. 2H para 6, Art. 5 para 8 ter); laboratory and analytical, essential and
// critical uses are global exemptions handled as their decisions say (reference
// Montreal Protocol Art. 2A–2J and Art. 5).
func exemptPurpose(p Purpose, g substances.Group) string {
	switch p {
	case PurposeFeedstock:
		return "feedstock use"
	case PurposeDestruction:
		return "destruction"
	case PurposeLaboratory:
		return "laboratory and analytical use"
	case PurposeEssentialUse:
		return "an essential use"
	case PurposeCriticalUse:
		return "a critical use"
	case PurposeProcessAgent:
		return "process-agent use"
	case PurposeQPS:
		if g == substances.GroupEI {
			return "quarantine and pre-shipment use"
		}
	}
	return ""
}

// phaseOutRules: an import of a group whose allowed consumption is zero for the reporting
// Party in the declaration year passes only for an exempted purpose or as used, recycled or
// reclaimed material. Exports and transit do not add to consumption and are not checked here.
func (c *checker) phaseOutRules() {
	if c.r.Direction != DirectionImport || !c.dateOK {
		return
	}
	year := c.date.Year()
	for _, g := range c.groups {
		pct, known := c.env.AllowedPercent(g, year)
		if !known {
			c.add(CodeScheduleUnknown, "", "no control schedule is known for %s in %d for the reporting Party; the phase-out was not checked", groupLabel(g), year)
			continue
		}
		if pct > 0 {
			continue
		}
		reason := exemptPurpose(c.r.Purpose, g)
		if reason == "" && c.r.Condition.Recovered() {
			reason = c.r.Condition.String() + " material"
		}
		if reason != "" {
			c.add(CodePhasedOutExempt, "", "%s is phased out for the reporting Party in %d (allowed 0 %% of baseline); this import passes as %s", groupLabel(g), year, reason)
			continue
		}
		declared := "no purpose"
		if c.r.Purpose != PurposeUnspecified {
			declared = "purpose " + c.r.Purpose.String()
		}
		c.add(CodePhasedOut, "", "%s is phased out for the reporting Party in %d (allowed 0 %% of baseline) and the import declares %s and %s material; only feedstock, destruction, laboratory, essential use, critical use, process agent, QPS (methyl bromide), or used/recycled/reclaimed material pass",
			groupLabel(g), year, declared, conditionWord(c.r.Condition))
	}
}

func conditionWord(cd Condition) string {
	if cd == ConditionUnspecified {
		return "virgin"
	}
	return cd.String()
}

// purposeRules checks the declared purpose and condition and decides whether the record
// counts in national consumption.
func (c *checker) purposeRules(controlled bool) bool {
	r := c.r
	if r.Purpose == PurposeQPS && c.evOK && !c.hasGroup(substances.GroupEI) {
		c.add(CodeQPSNotMB, "", "quarantine and pre-shipment (QPS) is declared for %s, which holds no methyl bromide; QPS applies to methyl bromide only", c.designation)
	}
	if !controlled {
		return false
	}
	counts := true
	if r.Purpose == PurposeUnspecified {
		c.add(CodePurposeMissing, "", "no purpose is declared; the shipment is treated as ordinary use")
	}
	if r.Direction == DirectionTransit {
		c.add(CodeTransitNotCounted, "", "transit is neither an import nor an export and is not counted in consumption")
		counts = false
	}
	if r.Condition.Recovered() {
		c.add(CodeRecoveredNotCounted, "", "%s material is not counted in consumption (Decision IV/24) if it is reported under Article 7; it still counts in an Article 5 Party's base-year consumption", r.Condition)
		counts = false
	}
	switch r.Purpose {
	case PurposeFeedstock, PurposeDestruction, PurposeProcessAgent:
		c.add(CodePurposeNotCounted, "", "%s amounts are reported but not counted in consumption", r.Purpose)
		counts = false
	case PurposeQPS:
		if c.hasGroup(substances.GroupEI) {
			c.add(CodePurposeNotCounted, "", "quarantine and pre-shipment amounts of methyl bromide are reported but not counted in consumption")
			counts = false
		}
	}
	// Exports to non-Parties are not deducted from consumption from 1993 (Art. 3 para 1(c)).
	if r.Direction.Outgoing() && c.partnerNonParty && !c.date.Before(date(1993, 1, 1)) {
		counts = false
	}
	return counts
}
