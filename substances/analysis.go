package substances

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"github.com/halovet/halovet/exact"
)

// Limits of a reading.
const (
	// DefaultUncertainty is the ± mass % points a component's reading is taken to carry when
	// neither the component nor the reading states one (common practice for portable
	// refrigerant analysers; from memory).
	DefaultUncertainty = 1.0
	// ReadingSumTolerance is how far the reported percentages (components and non-condensables
	// together) may sum away from 100: analysers print rounded figures (common practice).
	ReadingSumTolerance = 2.0
	// MinorComponentPct is the largest share (of the refrigerant part) a component may have
	// and still be set aside as a contaminant when nothing fits the whole reading.
	MinorComponentPct = 5.0
	// NonCondensableNoticePct is the share of non-condensables above which a reading is
	// flagged: a cylinder filled properly holds next to none (common practice).
	NonCondensableNoticePct = 1.5
	// maxReadingComponents bounds the components of one reading.
	maxReadingComponents = 32
	// defaultNearMisses is how many non-fitting candidates an analysis lists.
	defaultNearMisses = 3
)

// Reading is a measured composition of a cylinder's contents.
type Reading struct {
	Components []MeasuredShare
	// NonCondensablePct is the share of air and other non-condensable gases, mass %,
	// reported apart from the refrigerant components. A component named "air",
	// "non-condensables" or "NCG" is counted here too.
	NonCondensablePct float64
	// Uncertainty is the ± mass % points of every component that states none; 0 means
	// DefaultUncertainty.
	Uncertainty float64
}

// MeasuredShare is one component of a reading.
type MeasuredShare struct {
	Identifier  string  // any identifier that resolves to one catalogue substance
	MassPct     float64 // mass % as read, 0 to 100
	Uncertainty float64 // ± mass % points of this component; 0 when the instrument states none
}

// AnalysisOptions carry the declaration a reading is compared with.
type AnalysisOptions struct {
	Declared  string  // declared substance or blend (any identifier the resolver takes); "" when none
	NetMassKg float64 // declared net mass, for the figures of what the reading holds
	// NetMass is the declared net mass as an exact decimal; when zero, NetMassKg is read.
	NetMass    exact.Decimal
	NearMisses int // non-fitting candidates to list; 0 means 3
}

// MeasuredComponent is one component of a reading after non-condensables are set aside.
type MeasuredComponent struct {
	Designation string
	Group       Group
	ReadPct     float64 // as read
	MassPct     float64 // share of the refrigerant part
	Uncertainty float64 // ± mass % points of the refrigerant part
	SafetyClass string
}

// ComponentFit is how one component of a reading compares with one candidate.
type ComponentFit struct {
	Designation string
	MeasuredPct float64 // share of the refrigerant part (0 when the reading lacks it)
	NominalPct  float64 // the candidate's nominal share (0 when the candidate lacks it)
	Low, High   float64 // the band: nominal − tolerance − uncertainty … nominal + tolerance + uncertainty
	Excess      float64 // mass % points outside the band; 0 inside
	InCandidate bool
	InReading   bool
}

// Match is one catalogue entry compared with a reading.
type Match struct {
	Designation string
	Kind        Kind
	Fits        bool    // every component inside its band
	Excess      float64 // mass % points outside the bands (Euclidean norm); 0 when Fits
	Depth       float64 // largest |measured − nominal| / half-width; ≤ 1 when Fits
	Components  []ComponentFit
	Extra       []string // components the reading shows (above their uncertainty) that the candidate lacks
	Missing     []string // components of the candidate the reading does not show
	Groups      []Group  // Annex groups of the candidate's controlled components
	SafetyClass string
}

// HiddenSubstance is a controlled substance the reading shows that the declaration does not
// list, with what it would draw at the declared net mass.
type HiddenSubstance struct {
	Designation string
	Group       Group
	MassPct     float64 // share of the refrigerant part
	MassKg      float64 // declared net mass × share
	ODP         float64
	ODPTonnes   float64 // metric tonnes × ODP
	ProtocolGWP float64 // GWP listed in the Protocol's Annexes, 0 when none
	// CO2eTonnes are the CO2-eq tonnes the Protocol counts: Annex F substances only.
	CO2eTonnes float64
	// ListedGWPTonnes are metric tonnes × ProtocolGWP whatever the group (CFCs and HCFCs have
	// an Annex-listed GWP but are counted in ODP tonnes): for information.
	ListedGWPTonnes float64
	// Exact holds the figures as exact decimals; the float64 fields are their nearest floats.
	Exact HiddenExact
}

// HiddenExact are a hidden substance's figures as exact decimals.
type HiddenExact struct {
	MassPct, MassKg, ODP, ODPTonnes, ProtocolGWP, CO2eTonnes, ListedGWPTonnes exact.Decimal
}

// ReadingState says what the figures allow to be said about a cylinder's contents.
type ReadingState int

// Reading states.
const (
	ReadingUnknown ReadingState = iota
	// ReadingStandard: at least one catalogue substance or blend fits the reading.
	ReadingStandard
	// ReadingContaminated: nothing fits the whole reading, but an entry fits once minor
	// components (each at most MinorComponentPct) are set aside.
	ReadingContaminated
	// ReadingMixed: nothing fits, even with minor components set aside: a mix of products
	// or a blend the catalogue does not know.
	ReadingMixed
)

var readingStateNames = [...]string{"unknown", "standard", "contaminated", "mixed"}

// String returns "standard", "contaminated" or "mixed".
func (s ReadingState) String() string {
	if s < 0 || int(s) >= len(readingStateNames) {
		return fmt.Sprintf("reading-state(%d)", int(s))
	}
	return readingStateNames[s]
}

// Analysis is the answer for one reading.
type Analysis struct {
	Components         []MeasuredComponent // the reading, refrigerant part renormalised
	NonCondensablePct  float64
	NonCondensableNote string // set when the share is above NonCondensableNoticePct
	State              ReadingState
	// Matches lists the fitting entries best first (by Depth), then up to NearMisses entries
	// that do not fit (by Excess).
	Matches []Match
	Fitting int // how many of Matches fit
	// SetAside and CleanFits explain a contaminated reading: the minor components set aside
	// and the entries that fit the rest.
	SetAside  []string
	CleanFits []string
	// Declared is the declared entry's comparison; nil when no declaration was given.
	Declared     *Match
	DeclaredFits bool
	// Hidden lists the controlled substances the reading shows that the declaration lacks.
	Hidden []HiddenSubstance
	// Figures are the reading's own figures at the declared net mass.
	Figures  Evaluation
	Summary  string   // one sentence
	Cautions []string // safety cautions for what the reading holds, then the decision-support notice
}

// nonCondensableNames are component names counted as non-condensables.
var nonCondensableNames = map[string]bool{"air": true, "noncondensables": true, "noncondensable": true, "ncg": true, "noncondensablegases": true}

// reading is a checked reading: its components and the uncertainty of components it does
// not list, both on the renormalised scale.
type reading struct {
	comps []readComp
	unc   float64
}

// readComp is a component of a reading being analysed.
type readComp struct {
	sub  *subEntry
	read float64
	pct  float64 // renormalised
	unc  float64 // renormalised
	// pctX is pct as a decimal: read × 100 / (sum of the refrigerant shares read), rounded
	// to exact.Percent's derived places; the figures of what the reading holds use it.
	pctX exact.Decimal
}

// Analyse compares a reading with every catalogue substance and blend and, when opts names
// a declaration, with the declared entry. Bad readings give *InputError or *IdentifierError
// naming the field: a percentage or uncertainty out of range, an unknown, ambiguous or blend
// identifier, a component given twice, percentages summing further than ReadingSumTolerance
// from 100, or nothing but non-condensables.
//
// A refrigerant analyser or a laboratory reports the mass percentages of the gases it finds
// in a cylinder, and the share of air and other non-condensable gases apart from them
// (common practice). Analyse sets the non-condensables aside, renormalises the refrigerant
// part to 100 % and compares it with every catalogue substance and blend:
//
//   - Band. For each component the candidate or the reading holds, the candidate allows
//     nominal − tolerance below … nominal + tolerance above (ASHRAE 34 composition
//     tolerances, as the catalogue records them), widened on both sides by the reading's
//     uncertainty of that component. A component the candidate lacks has nominal 0 and no
//     tolerance; a single substance is a candidate of one component at 100 % with no
//     tolerance. The candidate fits when every component lies inside its band.
//   - Excess (mass % points): the Euclidean norm over the components of how far each one lies
//     outside its band; 0 exactly when the candidate fits. Near misses are ranked by it.
//   - Depth (dimensionless): the largest over the components of |measured − nominal| divided
//     by the band's half-width on that side; at most 1 when the candidate fits, 0 at the
//     nominal composition. Fitting candidates are ranked by it, so that the blend whose
//     nominal composition the reading sits closest to, in units of what it allows, comes
//     first.
//
// A component the reading does not list is read as 0 with the reading-wide uncertainty;
// uncertainties are renormalised with the shares. Blends whose tolerances the catalogue does
// not record (the older azeotropes) are matched on the reading's uncertainty
// alone. When nothing fits, each component of at most MinorComponentPct is set aside in turn,
// then all of them together: an entry that fits the rest makes the reading contaminated,
// else it is mixed. The declared net mass is taken as refrigerant: the figures of hidden
// substances and of the reading apply the renormalised shares to it.
func (c *Catalogue) Analyse(r Reading, opts AnalysisOptions) (Analysis, error) {
	if err := checkComponentCount("components", len(r.Components)); err != nil {
		return Analysis{}, err
	}
	rd, ncg, err := c.readReading(r)
	if err != nil {
		return Analysis{}, err
	}
	if err := checkMass(opts.NetMassKg); err != nil {
		return Analysis{}, err
	}
	netMass := opts.NetMass
	if netMass.IsZero() {
		netMass = exact.OfFloat(opts.NetMassKg)
	} else if err := checkMassExact(netMass); err != nil {
		return Analysis{}, err
	}
	var declared target
	hasDeclared := strings.TrimSpace(opts.Declared) != ""
	if hasDeclared {
		if declared, err = c.targetFor(opts.Declared, "declared"); err != nil {
			return Analysis{}, err
		}
	}
	near := opts.NearMisses
	if near <= 0 {
		near = defaultNearMisses
	}

	comps := rd.comps
	a := Analysis{NonCondensablePct: ncg}
	for _, rc := range comps {
		a.Components = append(a.Components, MeasuredComponent{Designation: rc.sub.s.Designation, Group: rc.sub.s.Group,
			ReadPct: rc.read, MassPct: rc.pct, Uncertainty: rc.unc, SafetyClass: rc.sub.s.SafetyClass})
	}
	if ncg > NonCondensableNoticePct {
		a.NonCondensableNote = fmt.Sprintf("the reading shows %s %% non-condensables (air); a properly filled cylinder holds next to none", fmtPct(ncg))
	}

	fits, misses := c.rank(rd, near)
	a.Matches = append(fits, misses...)
	a.Fitting = len(fits)
	switch {
	case len(fits) > 0:
		a.State = ReadingStandard
	default:
		a.State = ReadingMixed
		if aside, clean := c.setAside(rd); len(clean) > 0 {
			a.State, a.SetAside, a.CleanFits = ReadingContaminated, aside, clean
		}
	}

	if hasDeclared {
		m := c.match(declared, rd)
		a.Declared = &m
		a.DeclaredFits = m.Fits
		a.Hidden = c.hidden(declared, comps, netMass)
	}

	a.Figures = readingFigures(comps, netMass)
	a.Cautions = a.Figures.Cautions
	a.Summary = a.summary(comps, opts.Declared)
	return a, nil
}

// readingFigures evaluates the renormalised reading at a net mass. Unlike EvaluateShares it
// keeps nothing in the catalogue's composition cache: readings rarely repeat, and they must
// not crowd out the compositions that shipment batches repeat.
func readingFigures(comps []readComp, netMassKg exact.Decimal) Evaluation {
	cd := make([]compData, 0, len(comps))
	for _, rc := range comps {
		if rc.pct > 0 {
			cd = append(cd, rc.sub.comps[0].withPct(rc.pctX))
		}
	}
	var ev Evaluation
	if len(cd) == 1 {
		for _, rc := range comps {
			if rc.pct > 0 {
				ev = rc.sub.base
			}
		}
	} else {
		ev = mixtureBase("", KindBlend, "", cd)
	}
	fillExact(&ev, cd, netMassKg)
	ev.Designation = ""
	return ev
}

// readReading checks a reading, resolves its components and renormalises them.
func (c *Catalogue) readReading(r Reading) (reading, float64, error) {
	badPct := func(field string, v float64, what string) error {
		return &InputError{Field: field, Reason: fmt.Sprintf("%v is not accepted; give %s", v, what)}
	}
	if len(r.Components) == 0 {
		return reading{}, 0, &InputError{Field: "components", Reason: "the reading lists no component; give each gas the instrument reports with its mass %"}
	}
	if len(r.Components) > maxReadingComponents {
		return reading{}, 0, &InputError{Field: "components", Reason: fmt.Sprintf("%d components; at most %d are accepted", len(r.Components), maxReadingComponents)}
	}
	if !inRange(r.NonCondensablePct, 0, 100) {
		return reading{}, 0, badPct("non_condensable_percent", r.NonCondensablePct, "the mass % of air and other non-condensables, 0 to 100")
	}
	if !inRange(r.Uncertainty, 0, 100) {
		return reading{}, 0, badPct("uncertainty_points", r.Uncertainty, "± mass % points, 0 (not stated) to 100")
	}
	defUnc := r.Uncertainty
	if defUnc == 0 {
		defUnc = DefaultUncertainty
	}
	ncg := r.NonCondensablePct
	ncgGiven := ncg > 0
	ncgField := "non_condensable_percent"
	comps := make([]readComp, 0, len(r.Components))
	fields := make([]int, 0, len(r.Components))
	sum := 0.0
	for i, m := range r.Components {
		field := fmt.Sprintf("components[%d]", i)
		if !inRange(m.MassPct, 0, 100) {
			return reading{}, 0, badPct(field+".mass_percent", m.MassPct, "a mass % from 0 to 100")
		}
		if !inRange(m.Uncertainty, 0, 100) {
			return reading{}, 0, badPct(field+".uncertainty_points", m.Uncertainty, "± mass % points, 0 (not stated) to 100")
		}
		sum += m.MassPct
		if nonCondensableNames[normalizeString(m.Identifier)] {
			if ncgGiven {
				return reading{}, 0, &InputError{Field: field + ".identifier", Reason: fmt.Sprintf("%q: non-condensables are already given as %s; give them once", m.Identifier, ncgField)}
			}
			ncg, ncgGiven, ncgField = ncg+m.MassPct, true, field
			continue
		}
		if strings.TrimSpace(m.Identifier) == "" {
			return reading{}, 0, &InputError{Field: field + ".identifier", Reason: "empty; give a designation, R-number, chemical name or CAS number"}
		}
		t, err := c.targetFor(m.Identifier, field+".identifier")
		if err != nil {
			return reading{}, 0, err
		}
		if t.kind != KindSubstance {
			return reading{}, 0, &InputError{Field: field + ".identifier", Reason: fmt.Sprintf("%q is the blend %s; an analyser reports the substances a blend is made of, list those", m.Identifier, c.entryName(t))}
		}
		se := &c.subs[t.idx]
		for k, prev := range comps {
			if prev.sub == se {
				return reading{}, 0, &InputError{Field: field + ".identifier", Reason: fmt.Sprintf("%q names %s, already given as components[%d]; give each substance once", m.Identifier, se.s.Designation, fields[k])}
			}
		}
		unc := m.Uncertainty
		if unc == 0 {
			unc = defUnc
		}
		comps = append(comps, readComp{sub: se, read: m.MassPct, unc: unc})
		fields = append(fields, i)
	}
	total := sum + r.NonCondensablePct
	if math.Abs(total-100) > ReadingSumTolerance {
		return reading{}, 0, &InputError{Field: "components", Reason: fmt.Sprintf("the components and non-condensables sum to %s %%; a reading must sum to 100 %% ± %g", fmtPct(total), ReadingSumTolerance)}
	}
	if ncg > 100 {
		return reading{}, 0, badPct(ncgField, ncg, "non-condensables of at most 100 % in all")
	}
	ref := 0.0
	for _, rc := range comps {
		ref += rc.read
	}
	if ref <= 0 {
		return reading{}, 0, &InputError{Field: "components", Reason: "the reading shows no refrigerant, only non-condensables; nothing can be matched (an empty or air-filled cylinder)"}
	}
	scale := 100 / ref
	refX := exact.Zero
	for _, rc := range comps {
		refX = refX.Add(exact.OfFloat(rc.read))
	}
	for i := range comps {
		comps[i].pctX = exact.Derive(exact.OfFloat(comps[i].read).Mul(exact.Hundred), refX, exact.Percent)
		comps[i].pct = comps[i].read * scale
		comps[i].unc *= scale
	}
	return reading{comps: comps, unc: defUnc * scale}, ncg, nil
}

func inRange(v, lo, hi float64) bool { return !math.IsNaN(v) && v >= lo && v <= hi }

// candidateComps returns the components and tolerances of a target.
func (c *Catalogue) candidateComps(t target) ([]compData, []Component) {
	if t.kind == KindBlend {
		e := &c.blends[t.idx]
		return e.comps, e.b.Components
	}
	return c.subs[t.idx].comps, nil
}

// score compares a reading with one candidate without building the Match: excess² and depth.
func score(rd reading, cand []compData, tols []Component) (excess2, depth float64, shared bool) {
	comps := rd.comps
	for k := range cand {
		x, u := 0.0, rd.unc
		for i := range comps {
			if comps[i].sub.s.Designation == cand[k].designation {
				x, u, shared = comps[i].pct, comps[i].unc, true
				break
			}
		}
		var plus, minus float64
		if tols != nil {
			plus, minus = tols[k].TolPlus, tols[k].TolMinus
		}
		e, d := bandScore(x, cand[k].pct, plus+u, minus+u)
		excess2 += e * e
		depth = math.Max(depth, d)
	}
	for i := range comps {
		in := false
		for k := range cand {
			if comps[i].sub.s.Designation == cand[k].designation {
				in = true
				break
			}
		}
		if !in {
			e, d := bandScore(comps[i].pct, 0, comps[i].unc, comps[i].unc)
			excess2 += e * e
			depth = math.Max(depth, d)
		}
	}
	return excess2, depth, shared
}

// bandTolerance absorbs binary rounding when a share sits exactly on a band edge.
const bandTolerance = 1e-9

// bandScore gives the excess of x outside nominal−below … nominal+above and the depth
// |x − nominal| / half-width on x's side.
func bandScore(x, nominal, above, below float64) (excess, depth float64) {
	d := x - nominal
	w := above
	if d < 0 {
		d, w = -d, below
	}
	if d > w+bandTolerance {
		excess = d - w
	}
	if w > 0 {
		depth = d / w
	} else if d > bandTolerance {
		depth = math.Inf(1)
	}
	return excess, depth
}

type scored struct {
	t       target
	excess2 float64
	depth   float64
}

// rank scores every entry that shares a component with the reading and returns the fitting
// ones by depth and the best near misses by excess.
func (c *Catalogue) rank(rd reading, near int) (fits, misses []Match) {
	var fit []scored
	miss := make([]scored, 0, near+1)
	consider := func(t target) {
		cd, tols := c.candidateComps(t)
		e2, depth, shared := score(rd, cd, tols)
		if !shared {
			return
		}
		s := scored{t: t, excess2: e2, depth: depth}
		if e2 == 0 {
			fit = append(fit, s)
			return
		}
		// Keep the best near misses in a short sorted slice.
		i := sort.Search(len(miss), func(i int) bool { return missLess(c, s, miss[i]) })
		if i >= near {
			return
		}
		miss = append(miss, scored{})
		copy(miss[i+1:], miss[i:])
		miss[i] = s
		if len(miss) > near {
			miss = miss[:near]
		}
	}
	for i := range c.subs {
		consider(target{kind: KindSubstance, idx: int32(i)})
	}
	for i := range c.blends {
		consider(target{kind: KindBlend, idx: int32(i)})
	}
	sort.Slice(fit, func(i, j int) bool {
		if fit[i].depth != fit[j].depth {
			return fit[i].depth < fit[j].depth
		}
		return entryLess(c, fit[i].t, fit[j].t)
	})
	for _, s := range fit {
		fits = append(fits, c.match(s.t, rd))
	}
	for _, s := range miss {
		misses = append(misses, c.match(s.t, rd))
	}
	return fits, misses
}

func missLess(c *Catalogue, a, b scored) bool {
	if a.excess2 != b.excess2 {
		return a.excess2 < b.excess2
	}
	if a.depth != b.depth {
		return a.depth < b.depth
	}
	return entryLess(c, a.t, b.t)
}

// entryLess orders substances before blends, then by designation.
func entryLess(c *Catalogue, a, b target) bool {
	if a.kind != b.kind {
		return a.kind < b.kind
	}
	return naturalLess(c.entryName(a), c.entryName(b))
}

// match builds the full comparison of a reading with one entry.
func (c *Catalogue) match(t target, rd reading) Match {
	comps := rd.comps
	cd, tols := c.candidateComps(t)
	m := Match{Designation: c.entryName(t), Kind: t.kind}
	if t.kind == KindBlend {
		m.Groups = append([]Group(nil), c.blends[t.idx].groups...)
		m.SafetyClass = c.blends[t.idx].b.SafetyClass
	} else {
		s := c.subs[t.idx].s
		if s.Group.Controlled() {
			m.Groups = []Group{s.Group}
		}
		m.SafetyClass = s.SafetyClass
	}
	excess2 := 0.0
	add := func(f ComponentFit, above, below float64) {
		e, d := bandScore(f.MeasuredPct, f.NominalPct, above, below)
		f.Low, f.High, f.Excess = f.NominalPct-below, f.NominalPct+above, e
		excess2 += e * e
		m.Depth = math.Max(m.Depth, d)
		m.Components = append(m.Components, f)
	}
	for k := range cd {
		f := ComponentFit{Designation: cd[k].designation, NominalPct: cd[k].pct, InCandidate: true}
		u := rd.unc
		for i := range comps {
			if comps[i].sub.s.Designation == f.Designation {
				f.MeasuredPct, u, f.InReading = comps[i].pct, comps[i].unc, true
				break
			}
		}
		if f.MeasuredPct == 0 {
			m.Missing = append(m.Missing, f.Designation)
		}
		var plus, minus float64
		if tols != nil {
			plus, minus = tols[k].TolPlus, tols[k].TolMinus
		}
		add(f, plus+u, minus+u)
	}
	for i := range comps {
		name := comps[i].sub.s.Designation
		in := false
		for k := range cd {
			if cd[k].designation == name {
				in = true
				break
			}
		}
		if in {
			continue
		}
		if comps[i].pct > comps[i].unc+bandTolerance {
			m.Extra = append(m.Extra, name)
		}
		add(ComponentFit{Designation: name, MeasuredPct: comps[i].pct, InReading: true}, comps[i].unc, comps[i].unc)
	}
	m.Excess = math.Sqrt(excess2)
	m.Fits = excess2 == 0
	return m
}

// setAside looks for entries that fit once minor components are set aside: each minor
// component alone first, then all of them together.
func (c *Catalogue) setAside(rd reading) (aside, clean []string) {
	comps := rd.comps
	var minor []int
	for i, rc := range comps {
		if rc.pct > 0 && rc.pct <= MinorComponentPct {
			minor = append(minor, i)
		}
	}
	if len(minor) == 0 || len(minor) == len(comps) {
		return nil, nil
	}
	try := func(drop []int) []string {
		rest := make([]readComp, 0, len(comps))
		sum := 0.0
		for i, rc := range comps {
			skip := false
			for _, d := range drop {
				skip = skip || d == i
			}
			if !skip {
				rest = append(rest, rc)
				sum += rc.pct
			}
		}
		if sum <= 0 {
			return nil
		}
		for i := range rest {
			rest[i].pct *= 100 / sum
			rest[i].unc *= 100 / sum
		}
		fits, _ := c.rank(reading{comps: rest, unc: rd.unc * 100 / sum}, 0)
		var names []string
		for _, m := range fits {
			names = append(names, m.Designation)
		}
		return names
	}
	names := func(idx []int) []string {
		out := make([]string, len(idx))
		for i, k := range idx {
			out[i] = comps[k].sub.s.Designation
		}
		return out
	}
	for _, k := range minor {
		if fits := try([]int{k}); len(fits) > 0 {
			return names([]int{k}), fits
		}
	}
	if len(minor) > 1 {
		if fits := try(minor); len(fits) > 0 {
			return names(minor), fits
		}
	}
	return nil, nil
}

// hidden lists the controlled components of the reading (above their uncertainty) that the
// declared entry does not contain.
func (c *Catalogue) hidden(declared target, comps []readComp, netMassKg exact.Decimal) []HiddenSubstance {
	cd, _ := c.candidateComps(declared)
	var out []HiddenSubstance
	for _, rc := range comps {
		s := rc.sub.s
		if !s.Group.Controlled() || rc.pct <= rc.unc+bandTolerance {
			continue
		}
		listed := false
		for k := range cd {
			listed = listed || cd[k].designation == s.Designation
		}
		if listed {
			continue
		}
		d := rc.sub.comps[0]
		kg := netMassKg.Percent(rc.pctX)
		t := kg.Shift(-3)
		x := HiddenExact{MassPct: rc.pctX, MassKg: kg, ODP: d.odpX, ODPTonnes: t.Mul(d.odpX), ProtocolGWP: d.mpGWPX, ListedGWPTonnes: t.Mul(d.mpGWPX)}
		if annexF(s.Group) {
			x.CO2eTonnes = x.ListedGWPTonnes
		}
		h := HiddenSubstance{Designation: s.Designation, Group: s.Group, MassPct: rc.pct, MassKg: kg.Float64(),
			ODP: s.ODP, ODPTonnes: x.ODPTonnes.Float64(), ProtocolGWP: s.ProtocolGWP(), CO2eTonnes: x.CO2eTonnes.Float64(),
			ListedGWPTonnes: x.ListedGWPTonnes.Float64(), Exact: x}
		out = append(out, h)
	}
	return out
}

// summary writes the one-sentence answer.
func (a *Analysis) summary(comps []readComp, declared string) string {
	var b strings.Builder
	b.WriteString("Reading ")
	b.WriteString(readingList(comps))
	if a.NonCondensablePct > 0 {
		fmt.Fprintf(&b, " (non-condensables %s %% set aside)", fmtPct(a.NonCondensablePct))
	}
	b.WriteString(": ")
	var fitNames []string
	for _, m := range a.Matches[:a.Fitting] {
		fitNames = append(fitNames, m.Designation)
	}
	switch a.State {
	case ReadingStandard:
		if len(fitNames) == 1 {
			b.WriteString("fits " + fitNames[0])
		} else {
			b.WriteString("fits " + strings.Join(fitNames, ", ") + ", which the reading and its uncertainty cannot tell apart")
		}
	case ReadingContaminated:
		fmt.Fprintf(&b, "no standard blend fits; with %s set aside as contamination it fits %s", strings.Join(a.SetAside, ", "), strings.Join(a.CleanFits, ", "))
	default:
		var closest []string
		for _, m := range a.Matches {
			closest = append(closest, m.Designation)
		}
		b.WriteString("no standard blend fits, a mix of products or a blend not in the catalogue")
		if len(closest) > 0 {
			b.WriteString("; closest: " + strings.Join(closest, ", "))
		}
	}
	if a.Declared != nil {
		if a.DeclaredFits {
			fmt.Fprintf(&b, "; the declared %s fits", a.Declared.Designation)
		} else {
			fmt.Fprintf(&b, "; the declared %s does not fit", a.Declared.Designation)
		}
		for _, h := range a.Hidden {
			fmt.Fprintf(&b, "; undeclared %s (Annex %s) %s %%, %s ODP t", h.Designation, h.Group, fmtPct(h.MassPct), fmtNum(h.ODPTonnes))
			if h.CO2eTonnes > 0 {
				fmt.Fprintf(&b, ", %s CO2-eq t", fmtNum(h.CO2eTonnes))
			}
		}
	}
	b.WriteString(".")
	return b.String()
}

// readingList writes "HFC-134a 50 %, HCFC-22 50 %".
func readingList(comps []readComp) string {
	parts := make([]string, len(comps))
	for i, rc := range comps {
		parts[i] = rc.sub.s.Designation + " " + fmtPct(rc.pct) + " %"
	}
	return strings.Join(parts, ", ")
}

// fmtPct prints a percentage with at most 2 decimals.
func fmtPct(v float64) string { return trimZeros(fmt.Sprintf("%.2f", v)) }

// fmtNum prints a figure with at most 6 decimals.
func fmtNum(v float64) string { return trimZeros(fmt.Sprintf("%.6f", v)) }

func trimZeros(s string) string {
	if strings.Contains(s, ".") {
		s = strings.TrimRight(s, "0")
		s = strings.TrimSuffix(s, ".")
	}
	return s
}
