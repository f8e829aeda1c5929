package validate

import (
	"slices"

	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// exemptPurpose says why a purpose lets an import of a phased-out group pass, or "" when it
// does not. Sources: feedstock and destruction are outside production and consumption (Art. 1
// para 5; Decisions VII/30 and IV/11); process agents (Decision X/14); QPS only for methyl
// bromide (Art. 2H para 6, Art. 5 para 8 ter); laboratory and analytical, essential and
// critical uses pass only with an authorisation (exemptUseAuthorised).
func exemptPurpose(p terms.Purpose, g substances.Group) string {
	switch p {
	case terms.PurposeFeedstock:
		return "feedstock use"
	case terms.PurposeDestruction:
		return "destruction"
	case terms.PurposeLaboratory:
		return "laboratory and analytical use"
	case terms.PurposeEssentialUse:
		return "an essential use"
	case terms.PurposeCriticalUse:
		return "a critical use"
	case terms.PurposeProcessAgent:
		return "process-agent use"
	case terms.PurposeQPS:
		if g == substances.GroupEI {
			return "quarantine and pre-shipment use"
		}
	}
	return ""
}

// exemptionBasis gives, for the purposes that pass a phase-out only with an authorisation,
// the provision the authorisation rests on; "" for the other purposes.
func exemptionBasis(p terms.Purpose) string {
	switch p {
	case terms.PurposeEssentialUse:
		return "essential uses exist only as the Meeting of the Parties authorises them for a Party and year (Decision IV/25 and the yearly essential-use decisions)"
	case terms.PurposeCriticalUse:
		return "critical uses of methyl bromide exist only as the Parties authorise them for a Party and year (Article 2H para 5; Decision IX/6)"
	case terms.PurposeLaboratory:
		return "laboratory and analytical uses pass under the Parties' global exemption with its exclusions (Decision VI/9 and its extensions; from memory for the current extension)"
	case terms.PurposeProcessAgent:
		return "process agents pass only for the uses the Parties list (Decision X/14, table A, and its updates)"
	}
	return ""
}

// exemptUseAuthorised checks a claimed essential, critical, laboratory or process-agent use
// of phased-out group g: critical use exists only for methyl bromide, and every such use needs
// an authorisation, here the licence listing the purpose (the national authority issues it
// within what the Parties authorised). It adds the finding and returns false when the use does
// not pass.
func (c *checker) exemptUseAuthorised(g substances.Group, year int) bool {
	p := c.r.Purpose
	basis := exemptionBasis(p)
	if basis == "" {
		return true
	}
	if p == terms.PurposeCriticalUse && g != substances.GroupEI {
		c.add(CodeExemptUseWrongGroup, "purpose", "%s is phased out for the reporting Party in %d and critical use is declared, but critical uses exist only for methyl bromide (Article 2H para 5; Decision IX/6); declare the use the substance is authorised for, or hold the goods",
			groupLabel(g), year)
		return false
	}
	if c.lic != nil && c.lic.allowsPurpose(p) {
		return true
	}
	held := "no licence is named"
	if c.lic != nil {
		held = "licence " + c.lic.Number + " lists " + purposeList(c.lic.SpecialPurposes)
	}
	c.add(CodeExemptUseUnauthorised, "purpose", "%s is phased out for the reporting Party in %d and %s is declared without an authorisation: %s; the licence must list %s or hold a quota line limited to it (%s)",
		groupLabel(g), year, p, basis, p, held)
	return false
}

// HCFC servicing tails. After the HCFC phase-out a Party may still consume a small share of
// its baseline, but only for the uses the tail names: non-Article 5 Parties in 2020-2029
// (Article 2F para 6, 0.5 % of the calculated baseline) and Article 5 Parties in 2030-2039
// (Article 5 para 8 ter (e), 2.5 % as a ten-year average), for servicing refrigeration and
// air-conditioning equipment existing at the start of the tail; the 2018 adjustment (Decision
// XXX/2) added servicing fire suppression and fire protection equipment, solvent use in
// rocket-engine manufacture and topical medical aerosols for the specialized treatment of
// burns (from memory; the adjusted text was not checked here).
func hcfcTail(t terms.PartyType, year int) (string, bool) {
	switch {
	case t == terms.PartyTypeNonArticle5 && year >= 2020 && year <= 2029:
		return "the non-Article 5 HCFC servicing tail of 2020-2029 (Article 2F para 6)", true
	case t == terms.PartyTypeArticle5 && year >= 2030 && year <= 2039:
		return "the Article 5 HCFC servicing tail of 2030-2039 (Article 5 para 8 ter (e))", true
	}
	return "", false
}

// tailUse reports whether purpose p is a use an HCFC servicing tail allows, or lies outside
// consumption or the phase-out altogether (feedstock, destruction, process agent, the
// authorised exempted uses, which are judged elsewhere).
func tailUse(p terms.Purpose) bool {
	switch p {
	case terms.PurposeServicing, terms.PurposeFireProtectionServicing, terms.PurposeRocketEngineSolvent, terms.PurposeMedicalAerosolBurns,
		terms.PurposeFeedstock, terms.PurposeDestruction, terms.PurposeProcessAgent, terms.PurposeLaboratory, terms.PurposeEssentialUse:
		return true
	}
	return false
}

// servicingTailRule limits an HCFC import during a servicing tail to the tail's uses.
// Used, recycled or reclaimed material is not consumption and passes.
func (c *checker) servicingTailRule(g substances.Group, year int) {
	if g != substances.GroupCI || c.r.Condition.Recovered() {
		return
	}
	self, ok := c.env.Parties[upper2(c.env.ReportingParty)]
	if !ok {
		return
	}
	tail, in := hcfcTail(self.Type, year)
	if !in || tailUse(c.r.Purpose) {
		return
	}
	const uses = "servicing refrigeration and air-conditioning equipment (servicing), servicing fire protection equipment (fire-protection-servicing), solvent in rocket-engine manufacture (rocket-engine-solvent), topical medical aerosols for burns (medical-aerosol-burns)"
	if c.r.Purpose == terms.PurposeUnspecified {
		c.add(CodeHCFCTailUseMissing, "purpose", "%s in %d falls under %s, which allows only %s; declare the purpose", groupLabel(g), year, tail, uses)
		return
	}
	c.add(CodeHCFCTailUse, "purpose", "%s for %s in %d falls under %s, which allows only %s",
		groupLabel(g), c.r.Purpose, year, tail, uses)
}

// phaseOutRules: an import of a group whose allowed consumption is zero for the reporting
// Party in the declaration year passes only for an exempted purpose (with its authorisation
// where the Protocol asks for one) or as used, recycled or reclaimed material; during an HCFC
// servicing tail an import is limited to the tail's uses. Exports and transit do not add to
// consumption and are not checked here.
func (c *checker) phaseOutRules() {
	if c.r.Direction != terms.DirectionImport || !c.dateOK {
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
			c.servicingTailRule(g, year)
			continue
		}
		reason := exemptPurpose(c.r.Purpose, g)
		if reason != "" && !c.exemptUseAuthorised(g, year) {
			continue
		}
		if reason == "" && c.r.Condition.Recovered() {
			reason = c.r.Condition.String() + " material"
		}
		if reason != "" {
			c.add(CodePhasedOutExempt, "", "%s is phased out for the reporting Party in %d (allowed 0 %% of baseline); this import passes as %s", groupLabel(g), year, reason)
			continue
		}
		declared := "no purpose"
		if c.r.Purpose != terms.PurposeUnspecified {
			declared = "purpose " + c.r.Purpose.String()
		}
		c.add(CodePhasedOut, "", "%s is phased out for the reporting Party in %d (allowed 0 %% of baseline) and the import declares %s and %s material; only feedstock, destruction, an authorised laboratory, essential, critical (methyl bromide) or process-agent use, QPS (methyl bromide), or used/recycled/reclaimed material pass",
			groupLabel(g), year, declared, conditionWord(c.r.Condition))
	}
}

func conditionWord(cd terms.Condition) string {
	if cd == terms.ConditionUnspecified {
		return "virgin"
	}
	return cd.String()
}

// purposeRules checks the declared purpose and condition and decides whether the record
// counts in national consumption.
func (c *checker) purposeRules(controlled bool) bool {
	r := c.r
	if r.Purpose == terms.PurposeQPS && c.evOK && !c.hasGroup(substances.GroupEI) {
		c.add(CodeQPSNotMB, "", "quarantine and pre-shipment (QPS) is declared for %s, which holds no methyl bromide; QPS applies to methyl bromide only", c.designation)
	}
	if !controlled {
		return false
	}
	counts := true
	if r.Purpose == terms.PurposeUnspecified {
		c.add(CodePurposeMissing, "", "no purpose is declared; the shipment is treated as ordinary use")
	}
	if r.Direction == terms.DirectionTransit {
		c.add(CodeTransitNotCounted, "", "transit is neither an import nor an export and is not counted in consumption")
		counts = false
	}
	if r.Condition.Recovered() {
		c.add(CodeRecoveredNotCounted, "", "%s material is not counted in consumption (Decision IV/24) if it is reported under Article 7; it still counts in an Article 5 Party's base-year consumption", r.Condition)
		counts = false
	}
	// The purpose takes an import out of consumption (the import and the use's deduction
	// cancel); an export to a Party is deducted whatever its purpose (Art. 3 para 1(c);
	// Decision VII/30 for feedstock exports), so the flag agrees with the totals.
	switch {
	case r.Direction.Outgoing():
	case r.Purpose == terms.PurposeFeedstock || r.Purpose == terms.PurposeDestruction || r.Purpose == terms.PurposeProcessAgent:
		c.add(CodePurposeNotCounted, "", "%s amounts are reported but not counted in consumption", r.Purpose)
		counts = false
	case r.Purpose == terms.PurposeQPS:
		if c.hasGroup(substances.GroupEI) {
			c.add(CodePurposeNotCounted, "", "quarantine and pre-shipment amounts of methyl bromide are reported but not counted in consumption")
			counts = false
		}
	}
	// Exports to non-Parties are not deducted from consumption from 1993 (Art. 3 para 1(c)).
	// Party status is per Annex group (Art. 4 para 9): the export still counts when the
	// partner is bound for one of its groups, and deducts only those groups' components.
	if r.Direction.Outgoing() && c.partnerNonParty && !c.date.Before(date(1993, 1, 1)) {
		counts = slices.ContainsFunc(c.groups, func(g substances.Group) bool { return !slices.Contains(c.notBound, g) })
	}
	return counts
}
