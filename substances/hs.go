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

// hsTable lists the subheadings of chapters 29 and 38 that hold controlled halocarbons, and
// their neighbours that a declaration may name. Source: WCO HS 2017/HS 2022 nomenclature (UN Comtrade
// descriptions of HS 2022 and HS 2017; WCO Recommendation of 25 June 1999 on ODS codes; UNEP
// OzonAction HS code fact sheets). Shared marks subheadings whose text covers uncontrolled goods too;
// where it is derived, the comment says so.
var hsTable = []HSSubheading{
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
	{HS2022, "3827.11", "Mixtures containing CFCs, whether or not containing HCFCs, PFCs or HFCs", false, HSStatusVerified},
	{HS2022, "3827.12", "Mixtures containing HBFCs", false, HSStatusVerified},
	{HS2022, "3827.13", "Mixtures containing carbon tetrachloride", false, HSStatusVerified},
	{HS2022, "3827.14", "Mixtures containing 1,1,1-trichloroethane (methyl chloroform)", false, HSStatusVerified},
	{HS2022, "3827.20", "Mixtures containing halon-1211, halon-1301 or dibromotetrafluoroethanes (halon-2402)", false, HSStatusVerified},
	// 3827.31: the UN Comtrade description is cut off; the range 2903.41-2903.48 is from memory.
	{HS2022, "3827.31", "Mixtures containing HCFCs, without CFCs: containing substances of subheadings 2903.41 to 2903.48 (range unverified)", false, HSStatusPartly},
	{HS2022, "3827.32", "Mixtures containing HCFCs, without CFCs: other, containing substances of subheadings 2903.71 to 2903.75", false, HSStatusVerified},
	{HS2022, "3827.39", "Mixtures containing HCFCs, without CFCs: other", true, HSStatusVerified},
	// 3827.40: "or bromochloromethane" and the indentation level are from memory.
	{HS2022, "3827.40", "Mixtures containing methyl bromide (bromomethane) or bromochloromethane (second part unverified)", false, HSStatusPartly},
	{HS2022, "3827.51", "Mixtures containing HFC-23 or PFCs, without CFCs or HCFCs: containing trifluoromethane (HFC-23)", false, HSStatusVerified},
	// Shared derived: a mixture of PFCs only is not controlled by the Protocol.
	{HS2022, "3827.59", "Mixtures containing HFC-23 or PFCs, without CFCs or HCFCs: other", true, HSStatusVerified},
	{HS2022, "3827.61", "Mixtures containing other HFCs, without CFCs or HCFCs: containing 15 % or more by mass of 1,1,1-trifluoroethane (HFC-143a)", false, HSStatusVerified},
	// 3827.62-3827.65 and 3827.68: thresholds and last clauses from memory.
	{HS2022, "3827.62", "Other HFC mixtures: 55 % or more by mass of HFC-125, without unsaturated HFCs (thresholds unverified)", false, HSStatusPartly},
	{HS2022, "3827.63", "Other HFC mixtures: 40 % or more by mass of HFC-125 (thresholds unverified)", false, HSStatusPartly},
	{HS2022, "3827.64", "Other HFC mixtures: 30 % or more by mass of HFC-134a, without unsaturated HFCs (thresholds unverified)", false, HSStatusPartly},
	{HS2022, "3827.65", "Other HFC mixtures: 20 % or more by mass of HFC-32 and 20 % or more by mass of HFC-125 (thresholds unverified)", false, HSStatusPartly},
	{HS2022, "3827.68", "Other HFC mixtures: containing substances of subheadings 2903.41 to 2903.48 (clause unverified)", false, HSStatusPartly},
	{HS2022, "3827.69", "Other HFC mixtures: other", true, HSStatusVerified},
	{HS2022, "3827.90", "Other mixtures containing halogenated derivatives of methane, ethane or propane", true, HSStatusVerified},

	// HS 2017 (UN Comtrade HS 2017 descriptions). 2903.14 and 2903.19 are not listed for HS 2017 in
	// the WCO HS 2022 nomenclature; that they were unchanged from HS 2022 is from memory.
	{HS2017, "2903.14", "Carbon tetrachloride", false, HSStatusUnverified},
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
// catalogue writes it, e.g. "HFC-143a", "R-290", "methyl chloroform"), its Annex group and
// its share in percent by mass. The shares describe the whole mixture; a total below 100 %
// leaves an unidentified remainder.
type HSShare struct {
	Designation string
	Group       Group
	MassPct     float64
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
	hsUnsatFluoro // HFOs, HCFOs and other unsaturated fluorinated compounds
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
		return classifyHSByGroup(comp, sh.Group)
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
		if has("F") {
			comp.kind = hsUnsatFluoro
		}
	case only("C", "F"):
		comp.kind = hsPFC
	case only("C", "H", "F"):
		comp.kind = hsHFC
		if hill == "CHF3" {
			comp.kind = hsHFC23
		}
		comp.is143a = canonical == "R-143a"
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
		return "", fmt.Sprintf("%s mixture subheading not decided: the identified components point to %s (%s), but unidentified components (%s) might put the mixture in an earlier subheading", edition, code, why, strings.Join(m.unknown, "; "))
	}
	return code, fmt.Sprintf("%s %s: %s", edition, code, why)
}

// MixtureHS2022 classifies a mixture in HS 2022 heading 38.27. The
// subheadings are tried in the heading's order (CFCs, HBFCs, carbon tetrachloride, methyl
// chloroform, halons, HCFCs, methyl bromide, HFC-23/PFCs, other HFCs, other) and the first
// that fits decides; that precedence follows the structure of the heading and its "whether or
// not containing" wording. A subheading whose wording is only partly verified (3827.31,
// 3827.40, 3827.62-3827.65, 3827.68) is never chosen: code is "" and the note says why the
// subheading is not decided. Decision support only: the WCO legal text and the customs
// authority prevail.
func MixtureHS2022(shares []HSShare) (code string, note string) {
	const ed = "HS 2022"
	m := newHSMixture(shares)
	if note, ok := m.precheck(ed); !ok {
		return "", note
	}
	switch {
	case m.has(hsCFC):
		return "3827.11", fmt.Sprintf("%s 3827.11: contains CFCs (%s); other components do not change that", ed, m.names(hsCFC))
	case m.has(hsHBFC):
		return m.decide(ed, "3827.12", "contains HBFCs ("+m.names(hsHBFC)+") and no CFCs")
	case m.has(hsCCl4):
		return m.decide(ed, "3827.13", "contains carbon tetrachloride and no CFCs or HBFCs")
	case m.has(hsMCF):
		return m.decide(ed, "3827.14", "contains 1,1,1-trichloroethane and no CFCs, HBFCs or carbon tetrachloride")
	case m.has(hsHalon):
		return m.decide(ed, "3827.20", "contains halons ("+m.names(hsHalon)+") and no CFCs, HBFCs, carbon tetrachloride or methyl chloroform")
	case m.has(hsHCFC):
		if len(m.unknown) > 0 {
			return m.decide(ed, "3827.3x", "contains HCFCs")
		}
		if m.has(hsHFC, hsHFC23, hsPFC, hsUnsatFluoro) {
			return "", fmt.Sprintf("%s mixture subheading not decided: contains HCFCs (%s) together with HFCs or PFCs (%s), which may fall in 3827.31, whose wording is only partly verified; classify by the WCO legal text", ed, m.names(hsHCFC), m.names(hsHFC, hsHFC23, hsPFC, hsUnsatFluoro))
		}
		listed := false
		for _, c := range m.comps {
			switch {
			case c.kind == hsHCFC && c.hcfcSub == "":
				return "", fmt.Sprintf("%s mixture subheading not decided: the formula of HCFC component %q is not known, so 3827.32 and 3827.39 cannot be told apart", ed, c.name)
			case c.kind == hsHCFC && c.hcfcSub != "none":
				listed = true
			}
		}
		if listed {
			return "3827.32", fmt.Sprintf("%s 3827.32: contains HCFCs of subheadings 2903.71-2903.75 (%s), no CFCs, HFCs or PFCs", ed, m.names(hsHCFC))
		}
		return "3827.39", fmt.Sprintf("%s 3827.39: contains only HCFCs outside subheadings 2903.71-2903.75 (%s), no CFCs, HFCs or PFCs", ed, m.names(hsHCFC))
	case m.has(hsMeBr, hsBCM):
		return m.unverified(ed, "3827.40", "contains methyl bromide or bromochloromethane ("+m.names(hsMeBr, hsBCM)+")")
	case m.has(hsHFC23):
		return m.decide(ed, "3827.51", "contains HFC-23 and no CFCs or HCFCs")
	case m.has(hsPFC):
		return m.decide(ed, "3827.59", "contains PFCs ("+m.names(hsPFC)+") without HFC-23, and no CFCs or HCFCs")
	case m.has(hsHFC):
		pct143a, exact := 0.0, true
		for _, c := range m.comps {
			if c.is143a {
				pct143a += c.pct
			} else if c.kind == hsHFC && !c.exact {
				exact = false // could be HFC-143a
			}
		}
		if pct143a >= 15-1e-9 {
			return m.decide(ed, "3827.61", fmt.Sprintf("contains HFCs with %.4g %% by mass of HFC-143a (15 %% or more), and no CFCs, HCFCs, HFC-23 or PFCs", pct143a))
		}
		if !exact {
			return "", fmt.Sprintf("%s mixture subheading not decided: an HFC component is named by formula only, so its HFC-143a share is unknown", ed)
		}
		return m.unverified(ed, "3827.62-3827.69", fmt.Sprintf("contains HFCs (%s) with less than 15 %% HFC-143a", m.names(hsHFC)))
	case m.has(hsUnsatFluoro):
		return "", fmt.Sprintf("%s mixture subheading not decided: whether unsaturated fluorinated compounds (%s) count as HFCs for heading 38.27 is not verified", ed, m.names(hsUnsatFluoro))
	}
	return m.decide(ed, "3827.90", "contains halogenated derivatives of methane, ethane or propane of none of the named classes")
}

// unverified says that the subheading that applies has wording that is not verified.
func (m hsMixture) unverified(edition, codes, why string) (string, string) {
	return "", fmt.Sprintf("%s mixture subheading not decided: the mixture %s, so it falls in %s, whose wording is only partly verified; the subheading is left to the WCO legal text and the customs authority", edition, why, codes)
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
