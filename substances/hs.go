package substances

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"
)

// ErrHSCode is wrapped by errors for text that is not an HS code.
var ErrHSCode = errors.New("invalid HS code")

// HSEdition names an edition of the WCO Harmonized System.
type HSEdition string

// The HS editions carried side by side.
const (
	HS2017 HSEdition = "HS2017"
	HS2022 HSEdition = "HS2022"
)

// Verification status of a subheading's code and wording, against the WCO Harmonized System nomenclature.
const (
	HSStatusVerified   = "verified"
	HSStatusPartly     = "partly verified"
	HSStatusUnverified = "unverified"
)

// HSSubheading is one six-digit HS subheading relevant to controlled halocarbons.
type HSSubheading struct {
	Edition HSEdition
	Code    string // "2903.71"
	Text    string // wording paraphrased from the HS subheading texts, not the WCO legal text
	Shared  bool   // also holds goods the Montreal Protocol does not control
	Status  string // HSStatusVerified, HSStatusPartly or HSStatusUnverified
}

// hsTable lists the subheadings of chapters 29 and 38 that hold controlled halocarbons, their
// neighbours that a declaration may name, and the subheadings of the uncontrolled substances of
// the catalogue (chapters 27, 28 and 29). Source: WCO Harmonized System nomenclature, HS 2022
// and HS 2017 editions, subheading descriptions as published by UN Comtrade (H6 and H5); the
// full wording of 3827.31, 3827.40 and 3827.61-3827.68 as reproduced in national tariffs that
// carry the HS 2022 text at six digits (UK Trade Tariff, EU TARIC, US HTSUS, chapter 38).
// Shared marks a subheading that also holds goods the Protocol does not control; where that is
// derived, the comment says so.
var hsTable = []HSSubheading{
	// Chapter 27. Chapter 27 Note 1(a): pure methane and propane stay in heading 27.11; other
	// separate chemically defined hydrocarbons go to chapter 29 (Chapter 29 Note 2(c)).
	{HS2022, "2711.12", "Petroleum gases and other gaseous hydrocarbons, liquefied: propane (pure propane included, Chapter 27 Note 1(a))", false, HSStatusVerified},
	{HS2022, "2711.13", "Petroleum gases and other gaseous hydrocarbons, liquefied: butanes (not chemically pure; pure butanes are 2901.10)", true, HSStatusVerified},
	{HS2022, "2711.14", "Petroleum gases and other gaseous hydrocarbons, liquefied: ethylene, propylene, butylene and butadiene (not chemically pure; pure propene is 2901.22)", true, HSStatusVerified},
	// Chapter 28.
	{HS2022, "2811.21", "Carbon dioxide", false, HSStatusVerified},
	{HS2022, "2814.10", "Anhydrous ammonia", false, HSStatusVerified},
	// Chapter 29.
	{HS2022, "2901.10", "Acyclic hydrocarbons, saturated (chemically defined ethane, butanes, pentanes; not methane or propane)", true, HSStatusVerified},
	{HS2022, "2901.22", "Acyclic hydrocarbons, unsaturated: propene (propylene)", false, HSStatusVerified},
	{HS2022, "2903.14", "Carbon tetrachloride", false, HSStatusVerified},
	{HS2022, "2903.19", "Other saturated chlorinated derivatives of acyclic hydrocarbons (includes 1,1,1-trichloroethane)", true, HSStatusVerified},
	{HS2022, "2903.41", "Trifluoromethane (HFC-23)", false, HSStatusVerified},
	{HS2022, "2903.42", "Difluoromethane (HFC-32)", false, HSStatusVerified},
	{HS2022, "2903.43", "Fluoromethane (HFC-41), 1,2-difluoroethane (HFC-152) and 1,1-difluoroethane (HFC-152a)", false, HSStatusVerified},
	{HS2022, "2903.44", "Pentafluoroethane (HFC-125), 1,1,1-trifluoroethane (HFC-143a) and 1,1,2-trifluoroethane (HFC-143)", false, HSStatusVerified},
	{HS2022, "2903.45", "1,1,1,2-Tetrafluoroethane (HFC-134a) and 1,1,2,2-tetrafluoroethane (HFC-134)", false, HSStatusVerified},
	{HS2022, "2903.46", "1,1,1,2,3,3,3-Heptafluoropropane (HFC-227ea), 1,1,1,2,2,3-hexafluoropropane (HFC-236cb), 1,1,1,2,3,3-hexafluoropropane (HFC-236ea) and 1,1,1,3,3,3-hexafluoropropane (HFC-236fa)", false, HSStatusVerified},
	{HS2022, "2903.47", "1,1,1,3,3-Pentafluoropropane (HFC-245fa) and 1,1,2,2,3-pentafluoropropane (HFC-245ca)", false, HSStatusVerified},
	{HS2022, "2903.48", "1,1,1,3,3-Pentafluorobutane (HFC-365mfc) and 1,1,1,2,2,3,4,5,5,5-decafluoropentane (HFC-43-10mee)", false, HSStatusVerified},
	{HS2022, "2903.49", "Other saturated fluorinated derivatives of acyclic hydrocarbons (PFCs, HFCs not listed above)", true, HSStatusVerified},
	{HS2022, "2903.51", "Unsaturated fluorinated derivatives: HFO-1234yf, HFO-1234ze and HFO-1336mzz(Z)", false, HSStatusVerified},
	{HS2022, "2903.59", "Other unsaturated fluorinated derivatives of acyclic hydrocarbons", false, HSStatusVerified},
	{HS2022, "2903.61", "Methyl bromide (bromomethane)", false, HSStatusVerified},
	{HS2022, "2903.62", "Ethylene dibromide (1,2-dibromoethane)", false, HSStatusVerified},
	{HS2022, "2903.69", "Other brominated or iodinated derivatives of acyclic hydrocarbons", false, HSStatusVerified},
	{HS2022, "2903.71", "Chlorodifluoromethane (HCFC-22)", false, HSStatusVerified},
	{HS2022, "2903.72", "Dichlorotrifluoroethanes (HCFC-123)", false, HSStatusVerified},
	{HS2022, "2903.73", "Dichlorofluoroethanes (HCFC-141, 141b)", false, HSStatusVerified},
	{HS2022, "2903.74", "Chlorodifluoroethanes (HCFC-142, 142b)", false, HSStatusVerified},
	{HS2022, "2903.75", "Dichloropentafluoropropanes (HCFC-225, 225ca, 225cb)", false, HSStatusVerified},
	{HS2022, "2903.76", "Bromochlorodifluoromethane (halon-1211), bromotrifluoromethane (halon-1301) and dibromotetrafluoroethanes (halon-2402)", false, HSStatusVerified},
	{HS2022, "2903.77", "Other, perhalogenated only with fluorine and chlorine (CFCs)", true, HSStatusVerified},
	{HS2022, "2903.78", "Other perhalogenated derivatives", false, HSStatusVerified},
	{HS2022, "2903.79", "Other halogenated derivatives of acyclic hydrocarbons with two or more different halogens (remaining HCFCs, HBFCs, bromochloromethane)", true, HSStatusVerified},
	{HS2022, "2904.91", "Trichloronitromethane (chloropicrin)", false, HSStatusVerified},
	{HS2022, "2909.19", "Acyclic ethers other than diethyl ether (includes dimethyl ether)", true, HSStatusVerified},
	{HS2022, "3827.11", "Mixtures containing CFCs, whether or not containing HCFCs, PFCs or HFCs", false, HSStatusVerified},
	{HS2022, "3827.12", "Mixtures containing HBFCs", false, HSStatusVerified},
	{HS2022, "3827.13", "Mixtures containing carbon tetrachloride", false, HSStatusVerified},
	{HS2022, "3827.14", "Mixtures containing 1,1,1-trichloroethane (methyl chloroform)", false, HSStatusVerified},
	{HS2022, "3827.20", "Mixtures containing halon-1211, halon-1301 or dibromotetrafluoroethanes (halon-2402)", false, HSStatusVerified},
	{HS2022, "3827.31", "Mixtures containing HCFCs, whether or not containing PFCs or HFCs, but not containing CFCs: containing substances of subheadings 2903.41 to 2903.48", false, HSStatusVerified},
	{HS2022, "3827.32", "Mixtures containing HCFCs, whether or not containing PFCs or HFCs, but not containing CFCs: other, containing substances of subheadings 2903.71 to 2903.75", false, HSStatusVerified},
	{HS2022, "3827.39", "Mixtures containing HCFCs, whether or not containing PFCs or HFCs, but not containing CFCs: other", true, HSStatusVerified},
	{HS2022, "3827.40", "Mixtures containing methyl bromide (bromomethane) or bromochloromethane", false, HSStatusVerified},
	{HS2022, "3827.51", "Mixtures containing HFC-23 or PFCs, but not containing CFCs or HCFCs: containing trifluoromethane (HFC-23)", false, HSStatusVerified},
	// Shared derived: a mixture of PFCs only is not controlled by the Protocol.
	{HS2022, "3827.59", "Mixtures containing HFC-23 or PFCs, but not containing CFCs or HCFCs: other", true, HSStatusVerified},
	{HS2022, "3827.61", "Mixtures containing other HFCs, but not containing CFCs or HCFCs: containing 15 % or more by mass of 1,1,1-trifluoroethane (HFC-143a)", false, HSStatusVerified},
	{HS2022, "3827.62", "Other HFC mixtures, not included in the subheading above: containing 55 % or more by mass of pentafluoroethane (HFC-125), but not containing unsaturated fluorinated derivatives of acyclic hydrocarbons (HFOs)", false, HSStatusVerified},
	{HS2022, "3827.63", "Other HFC mixtures, not included in the subheadings above: containing 40 % or more by mass of pentafluoroethane (HFC-125)", false, HSStatusVerified},
	{HS2022, "3827.64", "Other HFC mixtures, not included in the subheadings above: containing 30 % or more by mass of 1,1,1,2-tetrafluoroethane (HFC-134a), but not containing unsaturated fluorinated derivatives of acyclic hydrocarbons (HFOs)", false, HSStatusVerified},
	{HS2022, "3827.65", "Other HFC mixtures, not included in the subheadings above: containing 20 % or more by mass of difluoromethane (HFC-32) and 20 % or more by mass of pentafluoroethane (HFC-125)", false, HSStatusVerified},
	{HS2022, "3827.68", "Other HFC mixtures, not included in the subheadings above: containing substances of subheadings 2903.41 to 2903.48", false, HSStatusVerified},
	{HS2022, "3827.69", "Other HFC mixtures: other", true, HSStatusVerified},
	{HS2022, "3827.90", "Other mixtures containing halogenated derivatives of methane, ethane or propane", true, HSStatusVerified},

	// HS 2017 (UN Comtrade H5 descriptions). 2903.14 and 2903.19 are carried from HS 2022;
	// that they were unchanged from HS 2017 is from memory.
	{HS2017, "2903.14", "Carbon tetrachloride", false, HSStatusUnverified},
	// Chapters 27, 28 and 29 outside heading 29.03: the same six-digit subheadings as HS 2022
	// (from memory, not checked against the HS 2017 edition; 2904.91 arrived in HS 2017, also
	// from memory).
	{HS2017, "2711.12", "Petroleum gases and other gaseous hydrocarbons, liquefied: propane", false, HSStatusUnverified},
	{HS2017, "2711.13", "Petroleum gases and other gaseous hydrocarbons, liquefied: butanes", true, HSStatusUnverified},
	{HS2017, "2711.14", "Petroleum gases and other gaseous hydrocarbons, liquefied: ethylene, propylene, butylene and butadiene", true, HSStatusUnverified},
	{HS2017, "2811.21", "Carbon dioxide", false, HSStatusUnverified},
	{HS2017, "2814.10", "Anhydrous ammonia", false, HSStatusUnverified},
	{HS2017, "2901.10", "Acyclic hydrocarbons, saturated", true, HSStatusUnverified},
	{HS2017, "2901.22", "Acyclic hydrocarbons, unsaturated: propene (propylene)", false, HSStatusUnverified},
	{HS2017, "2904.91", "Trichloronitromethane (chloropicrin)", false, HSStatusUnverified},
	{HS2017, "2909.19", "Acyclic ethers other than diethyl ether", true, HSStatusUnverified},
	{HS2017, "2903.19", "Other saturated chlorinated derivatives of acyclic hydrocarbons (includes 1,1,1-trichloroethane)", true, HSStatusUnverified},
	{HS2017, "2903.39", "Fluorinated, brominated or iodinated derivatives of acyclic hydrocarbons: other (all HFCs and methyl bromide)", true, HSStatusVerified},
	// 2903.71-2903.79 existed in HS 2017 without the HCFC-number labels; the wording below
	// is the HS 2022 wording without them.
	{HS2017, "2903.71", "Chlorodifluoromethane", false, HSStatusVerified},
	{HS2017, "2903.72", "Dichlorotrifluoroethanes", false, HSStatusVerified},
	{HS2017, "2903.73", "Dichlorofluoroethanes", false, HSStatusVerified},
	{HS2017, "2903.74", "Chlorodifluoroethanes", false, HSStatusVerified},
	{HS2017, "2903.75", "Dichloropentafluoropropanes", false, HSStatusVerified},
	{HS2017, "2903.76", "Bromochlorodifluoromethane, bromotrifluoromethane and dibromotetrafluoroethanes", false, HSStatusVerified},
	{HS2017, "2903.77", "Other, perhalogenated only with fluorine and chlorine", true, HSStatusVerified},
	{HS2017, "2903.78", "Other perhalogenated derivatives", false, HSStatusVerified},
	{HS2017, "2903.79", "Other halogenated derivatives of acyclic hydrocarbons with two or more different halogens", true, HSStatusVerified},
	{HS2017, "3824.71", "Mixtures containing CFCs, whether or not containing HCFCs, PFCs or HFCs", false, HSStatusVerified},
	{HS2017, "3824.72", "Mixtures containing bromochlorodifluoromethane, bromotrifluoromethane or dibromotetrafluoroethanes (halons)", false, HSStatusVerified},
	{HS2017, "3824.73", "Mixtures containing HBFCs", false, HSStatusVerified},
	{HS2017, "3824.74", "Mixtures containing HCFCs, whether or not containing PFCs or HFCs, but not containing CFCs", false, HSStatusVerified},
	{HS2017, "3824.75", "Mixtures containing carbon tetrachloride", false, HSStatusVerified},
	{HS2017, "3824.76", "Mixtures containing 1,1,1-trichloroethane (methyl chloroform)", false, HSStatusVerified},
	{HS2017, "3824.77", "Mixtures containing bromomethane (methyl bromide) or bromochloromethane", false, HSStatusVerified},
	// Shared derived: a mixture of PFCs only is not controlled by the Protocol.
	{HS2017, "3824.78", "Mixtures containing PFCs or HFCs, but not containing CFCs or HCFCs", true, HSStatusVerified},
	{HS2017, "3824.79", "Other mixtures containing halogenated derivatives of methane, ethane or propane", true, HSStatusVerified},
}

var hsIndex = func() map[HSEdition]map[string]HSSubheading {
	m := map[HSEdition]map[string]HSSubheading{}
	for _, s := range hsTable {
		if m[s.Edition] == nil {
			m[s.Edition] = map[string]HSSubheading{}
		}
		m[s.Edition][s.Code] = s
	}
	return m
}()

const hsAccepts = "accepted: at least 6 digits, optionally grouped by '.' or spaces after digit pairs, e.g. 290371, 2903.71, 2903.71.00, 2903 71; digits beyond the sixth (national extensions) are dropped"

// NormalizeHS returns the six-digit subheading "NNNN.NN" of an HS code written as "290371",
// "2903.71", "2903.71.00" or "2903 71". Digits beyond the sixth are national extensions and
// are dropped. Errors wrap ErrHSCode.
func NormalizeHS(code string) (string, error) {
	s := strings.TrimSpace(code)
	digits := make([]byte, 0, 12)
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= '0' && c <= '9':
			digits = append(digits, c)
		case c == '.' || c == ' ':
			n := len(digits)
			if n == 0 || n%2 != 0 || s[i-1] == '.' || (s[i-1] == ' ' && c == '.') {
				return "", fmt.Errorf("%w %q: separator at position %d; %s", ErrHSCode, code, i+1, hsAccepts)
			}
		default:
			return "", fmt.Errorf("%w %q: character %q at position %d; %s", ErrHSCode, code, c, i+1, hsAccepts)
		}
		if len(digits) > 14 {
			return "", fmt.Errorf("%w %q: more than 14 digits; %s", ErrHSCode, code, hsAccepts)
		}
	}
	if len(digits) < 6 {
		return "", fmt.Errorf("%w %q: %d digits, fewer than the 6 of a subheading; %s", ErrHSCode, code, len(digits), hsAccepts)
	}
	if ch := string(digits[:2]); ch == "00" || ch > "97" {
		return "", fmt.Errorf("%w %q: chapter %s does not exist (chapters are 01-97)", ErrHSCode, code, ch)
	}
	return string(digits[:4]) + "." + string(digits[4:6]), nil
}

// LookupHS returns the subheading for a code in one edition; the code is normalized first.
// Only the subheadings relevant to controlled halocarbons are carried.
func LookupHS(edition HSEdition, code string) (HSSubheading, bool) {
	c, err := NormalizeHS(code)
	if err != nil {
		return HSSubheading{}, false
	}
	s, ok := hsIndex[edition][c]
	return s, ok
}

// HSEditions lists the HS editions carried, oldest first.
func HSEditions() []HSEdition { return []HSEdition{HS2017, HS2022} }

// HSShare is one component of a mixture for HS classification: its designation (as the
// catalogue writes it, e.g. "HFC-143a", "R-290", "methyl chloroform"), its Annex group, its
// share in percent by mass and, optionally, its molecular formula. The shares describe the whole mixture; a total below 100 %
// leaves an unidentified remainder.
type HSShare struct {
	Designation string
	Group       Group
	MassPct     float64
	Formula     string // optional molecular formula, used when the designation gives none
}

// hsKind is what a mixture component is for the mixture subheadings.
type hsKind int

const (
	hsUnknown        hsKind = iota
	hsNonHalogenated        // not a halogenated hydrocarbon: hydrocarbons, CO2, ammonia, dimethyl ether
	hsCFC
	hsHBFC
	hsCCl4
	hsMCF // 1,1,1-trichloroethane
	hsHalon
	hsHCFC
	hsMeBr
	hsBCM // bromochloromethane
	hsHFC23
	hsHFC // saturated HFCs other than HFC-23
	hsPFC
	hsUnsatFluoro // HFOs: unsaturated derivatives whose only halogen is fluorine (HS 2903.51-2903.59)
	hsOtherHalo   // other halogenated compounds
)

// hsComponent is a classified mixture component.
type hsComponent struct {
	name    string
	pct     float64
	kind    hsKind
	c1to3   int    // 1: a halogenated derivative of methane, ethane or propane; 0: not; -1: unknown
	hcfcSub string // HS 2022 2903.71-2903.75 subheading of an HCFC, "none", or "" when unknown
	exact   bool   // the isomer is known (a designation or structure, not a bare formula)
	is143a  bool
	hfc     string // canonical designation of a saturated HFC, e.g. "R-125"; "" when unknown
	in4148  int    // an HFC of HS 2022 subheadings 2903.41-2903.48: 1 yes, 0 no, -1 unknown
}

// nonHalogenatedNames are blend components named in words that hold no halogen.
var nonHalogenatedNames = map[string]bool{
	"propane": true, "butane": true, "n-butane": true, "isobutane": true, "propylene": true,
	"propene": true, "ethane": true, "pentane": true, "n-pentane": true, "isopentane": true,
	"carbon dioxide": true, "ammonia": true, "dimethyl ether": true, "nitrogen": true,
}

// hs2022HCFCSub maps an HCFC formula to its HS 2022 subheading 2903.71-2903.75.
var hs2022HCFCSub = map[string]string{
	"CHClF2": "2903.71", "C2HCl2F3": "2903.72", "C2H3Cl2F": "2903.73",
	"C2H3ClF2": "2903.74", "C3HCl2F5": "2903.75",
}

// hs4148Designations are the HFCs HS 2022 subheadings 2903.41-2903.48 name: the 18 Annex F
// substances (WCO HS 2022, heading 29.03; Montreal Protocol Annex F).
var hs4148Designations = map[string]bool{
	"R-23": true, "R-32": true, "R-41": true, "R-152": true, "R-152a": true, "R-125": true,
	"R-143a": true, "R-143": true, "R-134a": true, "R-134": true, "R-227ea": true, "R-236cb": true,
	"R-236ea": true, "R-236fa": true, "R-245fa": true, "R-245ca": true, "R-365mfc": true, "R-43-10mee": true,
}

// hs4148Formulas are the formulas all of whose saturated acyclic isomers are named in
// 2903.41-2903.48, so that a bare formula settles the question (derived: C1 and C2 HFCs).
var hs4148Formulas = map[string]bool{
	"CHF3": true, "CH2F2": true, "CH3F": true, "C2H4F2": true, "C2HF5": true, "C2H3F3": true, "C2H2F4": true,
}

// hs4148 says whether a saturated HFC is one of the substances of 2903.41-2903.48: 1 yes,
// 0 no, -1 unknown (a bare formula with isomers inside and outside the list).
func hs4148(hill, canonical string, exact, cyclic bool) int {
	switch {
	case cyclic:
		return 0
	case exact && hs4148Designations[canonical]:
		return 1
	case exact:
		return 0
	case hs4148Formulas[hill]:
		return 1
	case hill == "C2H5F" || hill == "CH4":
		return 0
	}
	return -1
}

// classifyHSShare works out what a component is, from its designation (or a formula or
// structure written in its place) and, failing that, its Annex group.
func classifyHSShare(sh HSShare) hsComponent {
	comp := hsComponent{name: sh.Designation, pct: sh.MassPct, c1to3: -1}
	var f Formula
	canonical, cyclic := "", false
	d, err := ParseDesignation(sh.Designation)
	switch {
	case err == nil:
		f, canonical, cyclic, comp.exact = d.Formula, d.Canonical(), strings.HasPrefix(d.Number, "C"), true
	case errors.Is(err, ErrNotSingleCompound) && (strings.IndexAny(d.Number, "6789") == 0 || d.Number == "E170"):
		// 600 series organics hold no halogen, inorganic compounds (700 plus molar mass) are
		// no halogenated hydrocarbons, and R-E170 is dimethyl ether.
		comp.kind, comp.c1to3 = hsNonHalogenated, 0
		return comp
	default:
		if r, err := EncodeDesignation(sh.Designation); err == nil {
			if d, err := ParseDesignation(r); err == nil {
				f, canonical, comp.exact = d.Formula, d.Canonical(), true
			}
		}
		if f == nil {
			f, _ = ParseFormula(sh.Designation)
		}
	}
	if f == nil {
		if nonHalogenatedNames[strings.ToLower(strings.TrimSpace(sh.Designation))] {
			comp.kind, comp.c1to3 = hsNonHalogenated, 0
			return comp
		}
		if sh.Group != GroupNone || sh.Formula == "" {
			return classifyHSByGroup(comp, sh.Group)
		}
		// An uncontrolled substance named in words (chloropicrin): classify by the formula
		// the catalogue gives it.
		if f, _ = ParseFormula(sh.Formula); f == nil {
			return comp
		}
	}
	hal := f["F"] + f["Cl"] + f["Br"] + f["I"]
	only := func(els ...string) bool {
		n := 0
		for _, el := range els {
			n += f[el]
		}
		total := 0
		for _, k := range f {
			total += k
		}
		return n == total
	}
	free := 2*f["C"] + 2 - f["H"] - hal
	saturated := free == 0 || (cyclic && free == 2)
	comp.c1to3 = 0
	if hal > 0 && free == 0 && f["C"] >= 1 && f["C"] <= 3 && only("C", "H", "F", "Cl", "Br", "I") {
		comp.c1to3 = 1
	}
	has := func(el string) bool { return f[el] > 0 }
	hill := f.Hill()
	switch {
	case hal == 0:
		comp.kind = hsNonHalogenated
	case !only("C", "H", "F", "Cl", "Br", "I"):
		comp.kind = hsOtherHalo
	case hill == "CCl4":
		comp.kind = hsCCl4
	case hill == "CH3Br":
		comp.kind = hsMeBr
	case hill == "CH2BrCl":
		comp.kind = hsBCM
	case hill == "CBrClF2" || hill == "CBrF3" || hill == "C2Br2F4":
		comp.kind = hsHalon // HS text names these three, 2402 as "dibromotetrafluoroethanes"
	case hill == "C2H3Cl3":
		comp.kind = hsOtherHalo
		if canonical == "R-140a" {
			comp.kind = hsMCF
		} else if !comp.exact {
			comp.kind = hsUnknown // 1,1,1- or 1,1,2-trichloroethane
		}
	case !saturated:
		comp.kind = hsOtherHalo
		if only("C", "H", "F") && !cyclic {
			comp.kind = hsUnsatFluoro // like 2903.51-2903.59: fluorine the only halogen
		}
	case only("C", "F"):
		comp.kind = hsPFC
	case only("C", "H", "F"):
		comp.kind = hsHFC
		if hill == "CHF3" {
			comp.kind = hsHFC23
		}
		comp.is143a = canonical == "R-143a"
		comp.in4148 = hs4148(hill, canonical, comp.exact, cyclic)
		if comp.exact {
			comp.hfc = canonical
		}
	case only("C", "Cl", "F") && has("F") && has("Cl"):
		comp.kind = hsCFC
	case only("C", "H", "Cl", "F") && has("F") && has("Cl") && has("H"):
		comp.kind = hsHCFC
		comp.hcfcSub = "none"
		if sub, ok := hs2022HCFCSub[hill]; ok {
			comp.hcfcSub = sub
		}
	case only("C", "H", "Br", "F") && has("Br") && has("F") && has("H"):
		comp.kind = hsHBFC
	default:
		comp.kind = hsOtherHalo
	}
	return comp
}

// classifyHSByGroup falls back on the Annex group when the designation gives no formula. All
// substances of Annexes A to E are derivatives of methane, ethane or propane; Annex F also
// holds a butane and a pentane.
func classifyHSByGroup(comp hsComponent, g Group) hsComponent {
	kinds := map[Group]hsKind{
		GroupAI: hsCFC, GroupBI: hsCFC, GroupAII: hsHalon, GroupBII: hsCCl4, GroupBIII: hsMCF,
		GroupCI: hsHCFC, GroupCII: hsHBFC, GroupCIII: hsBCM, GroupEI: hsMeBr, GroupFII: hsHFC23, GroupFI: hsHFC,
	}
	k, ok := kinds[g]
	if !ok {
		return comp // hsUnknown
	}
	comp.kind = k
	if g != GroupFI {
		comp.c1to3 = 1
	}
	return comp
}

// hsMixture holds the classified components of one mixture.
type hsMixture struct {
	comps   []hsComponent
	unknown []string // components that could not be classified
	problem string   // why the shares cannot be classified at all
}

func newHSMixture(shares []HSShare) hsMixture {
	var m hsMixture
	if len(shares) == 0 {
		m.problem = "no components given"
		return m
	}
	total := 0.0
	for _, sh := range shares {
		if math.IsNaN(sh.MassPct) || sh.MassPct < 0 || sh.MassPct > 100 {
			m.problem = fmt.Sprintf("component %q has mass share %v %%; shares are 0-100 %%", sh.Designation, sh.MassPct)
			return m
		}
		total += sh.MassPct
		if sh.MassPct == 0 {
			continue
		}
		c := classifyHSShare(sh)
		m.comps = append(m.comps, c)
		if c.kind == hsUnknown {
			m.unknown = append(m.unknown, sh.Designation)
		}
	}
	switch {
	case total > 100.5:
		m.problem = fmt.Sprintf("mass shares add up to %.2f %%, more than 100 %%", total)
	case total < 99.5:
		m.unknown = append(m.unknown, fmt.Sprintf("unidentified remainder of %.2f %%", 100-total))
		m.comps = append(m.comps, hsComponent{name: "remainder", pct: 100 - total, c1to3: -1})
	}
	return m
}

func (m hsMixture) has(kinds ...hsKind) bool {
	for _, c := range m.comps {
		for _, k := range kinds {
			if c.kind == k {
				return true
			}
		}
	}
	return false
}

func (m hsMixture) names(kinds ...hsKind) string {
	var out []string
	for _, c := range m.comps {
		for _, k := range kinds {
			if c.kind == k {
				out = append(out, c.name)
			}
		}
	}
	sort.Strings(out)
	return strings.Join(out, ", ")
}

// inHeading says whether the mixture contains a halogenated derivative of methane, ethane or
// propane (headings 38.27 and, for HS 2017, subheadings 3824.71-3824.79): 1 yes, 0 no, -1
// unknown.
func (m hsMixture) inHeading() int {
	res := 0
	for _, c := range m.comps {
		if c.c1to3 == 1 {
			return 1
		}
		if c.c1to3 == -1 {
			res = -1
		}
	}
	return res
}

// precheck returns a note when the mixture cannot be classified at all or lies outside the
// mixture subheadings; code is "" then.
func (m hsMixture) precheck(edition string) (string, bool) {
	if m.problem != "" {
		return fmt.Sprintf("%s mixture subheading not decided: %s", edition, m.problem), false
	}
	switch m.inHeading() {
	case 0:
		return fmt.Sprintf("%s: no component is a halogenated derivative of methane, ethane or propane, so the mixture subheadings for them do not apply; classify it elsewhere", edition), false
	case -1:
		if !m.has(hsCFC) {
			return fmt.Sprintf("%s mixture subheading not decided: components not identified (%s)", edition, strings.Join(m.unknown, "; ")), false
		}
	}
	return "", true
}

// decide returns code with a note, unless an unidentified component might belong to an
// earlier subheading of the precedence order.
func (m hsMixture) decide(edition, code, why string) (string, string) {
	if len(m.unknown) > 0 {
		return "", fmt.Sprintf("%s mixture subheading not decided: the identified components point to %s (%s), but unidentified components (%s) might put the mixture in another subheading", edition, code, why, strings.Join(m.unknown, "; "))
	}
	return code, fmt.Sprintf("%s %s: %s", edition, code, why)
}

// MixtureHS2022 classifies a mixture in HS 2022 heading 38.27 from the subheading texts
// (WCO HS 2022, Chapter 38; full wording as reproduced at six digits in national tariffs).
//
// Precedence, as the nomenclature gives it:
//   - 3827.11 (CFCs) holds its mixtures "whether or not containing HCFCs, PFCs or HFCs"; the
//     HCFC group 3827.31-3827.39 excludes CFCs; the HFC-23/PFC group 3827.51-3827.59 and the
//     other-HFC group 3827.61-3827.69 exclude CFCs and HCFCs; 3827.90 is the residual "other".
//   - Inside the other-HFC group the texts run "not included in the subheading(s) above", so
//     3827.61 (15 % or more HFC-143a) is tried first, then .62 (55 % HFC-125, no HFOs), .63
//     (40 % HFC-125), .64 (30 % HFC-134a, no HFOs), .65 (20 % HFC-32 and 20 % HFC-125), .68
//     (substances of 2903.41-2903.48) and .69 (other). Inside the HCFC group .31 (with
//     substances of 2903.41-2903.48) comes before .32 ("other", with HCFCs of 2903.71-2903.75)
//     and .39 ("other").
//   - The texts of 3827.12 (HBFCs), .13 (carbon tetrachloride), .14 (methyl chloroform), .20
//     (halons) and .40 (methyl bromide, bromochloromethane) carry no exclusion, and the
//     HFC-23/PFC group does not exclude other HFCs. A mixture that answers two of these texts
//     (say HCFC-22 with methyl bromide, or a PFC with HFC-134a) is not decided here: the
//     subheading texts do not rank them, and the General Interpretative Rules and the customs
//     authority decide.
//
// Thresholds are read on the declared (nominal) mass shares. Code is "" when the subheading is
// not decided, and the note says why. Decision support only: the WCO legal text and the
// customs authority prevail.
func MixtureHS2022(shares []HSShare) (code string, note string) {
	const ed = "HS 2022"
	m := newHSMixture(shares)
	if note, ok := m.precheck(ed); !ok {
		return "", note
	}
	// The one-dash texts with no exclusion of each other, in the nomenclature's order.
	type group struct{ codes, what string }
	var fits []group
	if m.has(hsCFC) {
		fits = append(fits, group{"3827.11", "CFCs (" + m.names(hsCFC) + ")"})
	}
	if m.has(hsHBFC) {
		fits = append(fits, group{"3827.12", "HBFCs (" + m.names(hsHBFC) + ")"})
	}
	if m.has(hsCCl4) {
		fits = append(fits, group{"3827.13", "carbon tetrachloride"})
	}
	if m.has(hsMCF) {
		fits = append(fits, group{"3827.14", "1,1,1-trichloroethane"})
	}
	if m.has(hsHalon) {
		fits = append(fits, group{"3827.20", "halons (" + m.names(hsHalon) + ")"})
	}
	if m.has(hsHCFC) && !m.has(hsCFC) {
		fits = append(fits, group{"3827.31-3827.39", "HCFCs (" + m.names(hsHCFC) + ") and no CFCs"})
	}
	if m.has(hsMeBr, hsBCM) {
		fits = append(fits, group{"3827.40", "methyl bromide or bromochloromethane (" + m.names(hsMeBr, hsBCM) + ")"})
	}
	otherHFC := m.has(hsHFC)
	if m.has(hsHFC23, hsPFC) && !m.has(hsCFC, hsHCFC) {
		fits = append(fits, group{"3827.51-3827.59", "HFC-23 or PFCs (" + m.names(hsHFC23, hsPFC) + ") and no CFCs or HCFCs"})
	}
	if otherHFC && !m.has(hsCFC, hsHCFC) {
		fits = append(fits, group{"3827.61-3827.69", "other HFCs (" + m.names(hsHFC) + ") and no CFCs or HCFCs"})
	}
	switch len(fits) {
	case 0:
		return m.decide(ed, "3827.90", "contains halogenated derivatives of methane, ethane or propane of none of the classes the other subheadings name")
	case 1:
	default:
		var parts []string
		for _, g := range fits {
			parts = append(parts, g.codes+" (contains "+g.what+")")
		}
		return "", fmt.Sprintf("%s mixture subheading not decided: the mixture answers the texts of %s, and the subheading texts do not say which prevails; the General Interpretative Rules and the customs authority decide", ed, strings.Join(parts, " and "))
	}
	g := fits[0]
	switch g.codes {
	case "3827.11":
		return m.decide(ed, "3827.11", "contains "+g.what+", whether or not with HCFCs, PFCs or HFCs, and none of the other classes the subheadings name")
	case "3827.31-3827.39":
		return m.hcfcGroup(ed)
	case "3827.51-3827.59":
		if m.has(hsHFC23) {
			return m.decide(ed, "3827.51", "contains HFC-23, and no CFCs, HCFCs or other HFCs")
		}
		return m.decide(ed, "3827.59", "contains PFCs ("+m.names(hsPFC)+") without HFC-23, and no CFCs, HCFCs or other HFCs")
	case "3827.61-3827.69":
		return m.hfcGroup(ed)
	}
	return m.decide(ed, g.codes, "contains "+g.what+" and none of the other classes the subheadings name")
}

// hcfcGroup decides inside 3827.31-3827.39 (HCFCs, no CFCs).
func (m hsMixture) hcfcGroup(ed string) (string, string) {
	if len(m.unknown) > 0 {
		return m.decide(ed, "3827.3x", "contains HCFCs ("+m.names(hsHCFC)+")")
	}
	with4148, unknown4148 := []string{}, []string{}
	listed := false
	for _, c := range m.comps {
		switch {
		case (c.kind == hsHFC || c.kind == hsHFC23) && c.in4148 == 1:
			with4148 = append(with4148, c.name)
		case (c.kind == hsHFC || c.kind == hsHFC23) && c.in4148 == -1:
			unknown4148 = append(unknown4148, c.name)
		case c.kind == hsHCFC && c.hcfcSub == "":
			return "", fmt.Sprintf("%s mixture subheading not decided: the formula of HCFC component %q is not known, so 3827.32 and 3827.39 cannot be told apart", ed, c.name)
		case c.kind == hsHCFC && c.hcfcSub != "none":
			listed = true
		}
	}
	switch {
	case len(with4148) > 0:
		sort.Strings(with4148)
		return "3827.31", fmt.Sprintf("%s 3827.31: contains HCFCs (%s), no CFCs, and substances of subheadings 2903.41-2903.48 (%s)", ed, m.names(hsHCFC), strings.Join(with4148, ", "))
	case len(unknown4148) > 0:
		return "", fmt.Sprintf("%s mixture subheading not decided: HFC component(s) %s are named by formula only, so whether they are substances of 2903.41-2903.48 (3827.31) is unknown", ed, strings.Join(unknown4148, ", "))
	case listed:
		return "3827.32", fmt.Sprintf("%s 3827.32: contains HCFCs of subheadings 2903.71-2903.75 (%s), no CFCs and no substance of 2903.41-2903.48", ed, m.names(hsHCFC))
	}
	return "3827.39", fmt.Sprintf("%s 3827.39: contains only HCFCs outside subheadings 2903.71-2903.75 (%s), no CFCs and no substance of 2903.41-2903.48", ed, m.names(hsHCFC))
}

// hfcGroup decides inside 3827.61-3827.69 (other HFCs, no CFCs or HCFCs, no HFC-23 or PFCs).
func (m hsMixture) hfcGroup(ed string) (string, string) {
	var pct143a, pct125, pct134a, pct32 float64
	exact, any4148 := true, false
	for _, c := range m.comps {
		if c.kind != hsHFC {
			continue
		}
		switch c.hfc {
		case "R-143a":
			pct143a += c.pct
		case "R-125":
			pct125 += c.pct
		case "R-134a":
			pct134a += c.pct
		case "R-32":
			pct32 += c.pct
		}
		if !c.exact {
			exact = false
		}
		if c.in4148 == 1 {
			any4148 = true
		}
	}
	const eps = 1e-9
	hfo := m.has(hsUnsatFluoro)
	names := m.names(hsHFC)
	if pct143a >= 15-eps {
		return m.decide(ed, "3827.61", fmt.Sprintf("contains HFCs (%s) with %.4g %% by mass of HFC-143a (15 %% or more), and no CFCs, HCFCs, HFC-23 or PFCs", names, pct143a))
	}
	if !exact {
		return "", fmt.Sprintf("%s mixture subheading not decided: an HFC component is named by formula only, so its HFC-143a, HFC-125, HFC-134a or HFC-32 share is unknown", ed)
	}
	switch {
	case pct125 >= 55-eps && !hfo:
		return m.decide(ed, "3827.62", fmt.Sprintf("HFC mixture with less than 15 %% HFC-143a, %.4g %% HFC-125 (55 %% or more) and no HFOs", pct125))
	case pct125 >= 40-eps:
		return m.decide(ed, "3827.63", fmt.Sprintf("HFC mixture not in 3827.61-3827.62, with %.4g %% HFC-125 (40 %% or more)", pct125))
	case pct134a >= 30-eps && !hfo:
		return m.decide(ed, "3827.64", fmt.Sprintf("HFC mixture not in 3827.61-3827.63, with %.4g %% HFC-134a (30 %% or more) and no HFOs", pct134a))
	case pct32 >= 20-eps && pct125 >= 20-eps:
		return m.decide(ed, "3827.65", fmt.Sprintf("HFC mixture not in 3827.61-3827.64, with %.4g %% HFC-32 and %.4g %% HFC-125 (20 %% or more of each)", pct32, pct125))
	case any4148:
		return m.decide(ed, "3827.68", fmt.Sprintf("HFC mixture not in 3827.61-3827.65, containing substances of subheadings 2903.41-2903.48 (%s)", names))
	}
	return m.decide(ed, "3827.69", fmt.Sprintf("HFC mixture not in 3827.61-3827.68: its HFCs (%s) are none of the substances of 2903.41-2903.48", names))
}

// MixtureHS2017 classifies a mixture in HS 2017 subheadings 3824.71-3824.79,
// trying them in numerical order: CFCs, halons, HBFCs, HCFCs, carbon
// tetrachloride, methyl chloroform, methyl bromide or bromochloromethane, PFCs or HFCs,
// other. Decision support only: the WCO legal text and the customs authority prevail.
func MixtureHS2017(shares []HSShare) (code string, note string) {
	const ed = "HS 2017"
	m := newHSMixture(shares)
	if note, ok := m.precheck(ed); !ok {
		return "", note
	}
	switch {
	case m.has(hsCFC):
		return "3824.71", fmt.Sprintf("%s 3824.71: contains CFCs (%s); other components do not change that", ed, m.names(hsCFC))
	case m.has(hsHalon):
		return m.decide(ed, "3824.72", "contains halons ("+m.names(hsHalon)+") and no CFCs")
	case m.has(hsHBFC):
		return m.decide(ed, "3824.73", "contains HBFCs ("+m.names(hsHBFC)+") and no CFCs or halons")
	case m.has(hsHCFC):
		return m.decide(ed, "3824.74", "contains HCFCs ("+m.names(hsHCFC)+") and no CFCs, halons or HBFCs")
	case m.has(hsCCl4):
		return m.decide(ed, "3824.75", "contains carbon tetrachloride")
	case m.has(hsMCF):
		return m.decide(ed, "3824.76", "contains 1,1,1-trichloroethane")
	case m.has(hsMeBr, hsBCM):
		return m.decide(ed, "3824.77", "contains methyl bromide or bromochloromethane")
	case m.has(hsHFC, hsHFC23, hsPFC):
		return m.decide(ed, "3824.78", "contains PFCs or HFCs ("+m.names(hsHFC, hsHFC23, hsPFC)+") and no CFCs or HCFCs")
	case m.has(hsUnsatFluoro):
		return "", fmt.Sprintf("%s mixture subheading not decided: whether unsaturated fluorinated compounds (%s) count as HFCs for 3824.78 is not verified", ed, m.names(hsUnsatFluoro))
	}
	return m.decide(ed, "3824.79", "contains halogenated derivatives of methane, ethane or propane of none of the named classes")
}
