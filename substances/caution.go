package substances

import (
	"fmt"
	"sort"
	"strings"
)

// Caution texts. Wording is our own.
const (
	cautionAsphyxiant = "Asphyxiation: the gas displaces air and gathers in enclosed or low-lying spaces " +
		"(cellars, pits, cold rooms, vehicle holds); ventilate and measure oxygen before entering."
	cautionFrostbite = "Frostbite: escaping liquid and expanding gas chill skin and eyes on contact; " +
		"wear insulated gloves and eye protection when connecting, venting or recovering."
	cautionDecomposition = "Toxic decomposition: in flames or on hot surfaces halocarbons break down into " +
		"toxic and corrosive products such as hydrogen fluoride and hydrogen chloride; no hot work near leaks."
	cautionLowerFlammability = "Lower flammability (ASHRAE 34 class %s): can ignite at high concentration; use equipment, " +
		"tools and charge limits approved for class %s refrigerants and keep ignition sources away."
	cautionFlammable = "Flammable (ASHRAE 34 class %s): keep ignition sources away and keep to the charge limits " +
		"set for flammable refrigerants."
	cautionHighlyFlammable = "Highly flammable (ASHRAE 34 class %s): no ignition sources, explosion-protected tools and " +
		"recovery equipment only, and strict charge limits."
	cautionHigherToxicity = "Higher toxicity (ASHRAE 34 class %s): low exposure limits; use leak detection, ventilation " +
		"and breathing protection as the safety data sheet requires."
	cautionUnclassified = "No ASHRAE 34 safety class is recorded for this entry: take flammability and " +
		"toxicity from the supplier's safety data sheet."
	cautionFumigant = "Toxic fumigant (%s): poisonous by inhalation at low concentrations, chloropicrin a strong " +
		"irritant and tear agent; handle only as the fumigation rules and the safety data sheet require, with gas " +
		"detection and breathing protection."
	cautionDecisionSupport = "Figures are decision support: the treaty text, national law and the national " +
		"authority prevail."
)

// flammable reports whether an ASHRAE 34 class marks a flammable refrigerant.
func flammable(class string) bool {
	return strings.HasSuffix(class, "2L") || strings.HasSuffix(class, "2") || strings.HasSuffix(class, "3")
}

// classCautions are the cautions a safety class calls for.
func classCautions(class string) []string {
	var out []string
	if strings.HasPrefix(class, "B") {
		out = append(out, fmt.Sprintf(cautionHigherToxicity, class))
	}
	switch {
	case strings.HasSuffix(class, "2L"):
		out = append(out, fmt.Sprintf(cautionLowerFlammability, class, class))
	case strings.HasSuffix(class, "2"):
		out = append(out, fmt.Sprintf(cautionFlammable, class))
	case strings.HasSuffix(class, "3"):
		out = append(out, fmt.Sprintf(cautionHighlyFlammable, class))
	}
	return out
}

// Cautions returns the cautions for a refrigerant of the given ASHRAE 34 safety class ("" when
// unknown): the class's flammability and toxicity cautions, then the general ones
// (asphyxiation, frostbite, toxic decomposition of halocarbons when halogenated is true), then
// the reminder that figures are decision support.
func Cautions(safetyClass string, halogenated bool) []string {
	out := classCautions(safetyClass)
	if safetyClass == "" {
		out = append(out, cautionUnclassified)
	}
	out = append(out, cautionAsphyxiant, cautionFrostbite)
	if halogenated {
		out = append(out, cautionDecomposition)
	}
	return append(out, cautionDecisionSupport)
}

// cautionsFor builds the cautions of a substance or mixture. A mixture without a recorded
// class that holds flammable or higher-toxicity components says so, naming them.
func cautionsFor(class string, comps []compData) []string {
	halogenated := false
	for _, c := range comps {
		halogenated = halogenated || c.halogen
	}
	out := Cautions(class, halogenated)
	var fumigants []string
	for _, c := range comps {
		if c.designation == "methyl bromide" || c.designation == "chloropicrin" {
			fumigants = append(fumigants, c.designation)
		}
	}
	if len(fumigants) > 0 {
		out = append([]string{fmt.Sprintf(cautionFumigant, strings.Join(fumigants, ", "))}, out...)
	}
	if class != "" || len(comps) < 2 {
		return out
	}
	var flam, toxic []string
	for _, c := range comps {
		if flammable(c.safety) {
			flam = append(flam, c.designation+" ("+c.safety+")")
		}
		if strings.HasPrefix(c.safety, "B") {
			toxic = append(toxic, c.designation+" ("+c.safety+")")
		}
	}
	sort.Strings(flam)
	sort.Strings(toxic)
	var extra []string
	if len(flam) > 0 {
		extra = append(extra, "Contains flammable components "+strings.Join(flam, ", ")+
			": without a class for the mixture, treat it as flammable, since leaks can enrich the flammable part.")
	}
	if len(toxic) > 0 {
		extra = append(extra, "Contains higher-toxicity components "+strings.Join(toxic, ", ")+".")
	}
	return append(extra, out...)
}

// SafetyClasses are the ASHRAE 34 / ISO 817 safety classes the catalogue accepts.
var SafetyClasses = []string{"A1", "A2L", "A2", "A3", "B1", "B2L", "B2", "B3"}

// validSafetyClass reports whether c is empty or an accepted ASHRAE 34 class.
func validSafetyClass(c string) bool {
	if c == "" {
		return true
	}
	for _, s := range SafetyClasses {
		if s == c {
			return true
		}
	}
	return false
}
