package substances

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"unicode/utf8"

	"github.com/halovet/halovet/exact"
)

// Formula is a molecular formula: element symbol -> atom count.
type Formula map[string]int

// ErrFormula is wrapped by every formula and structure parsing error.
var ErrFormula = errors.New("invalid formula")

// ErrNoAtomicWeight is wrapped when a molar mass is asked for a formula holding an element
// whose standard atomic weight this package does not carry.
var ErrNoAtomicWeight = errors.New("no standard atomic weight for element")

// FormulaError says where and why a formula or structure could not be parsed.
type FormulaError struct {
	Input string // the text as given
	Pos   int    // 1-based character position of the problem; 0 for the whole input
	Msg   string // what is wrong and what is accepted
}

func (e *FormulaError) Error() string {
	if e.Pos > 0 {
		return fmt.Sprintf("formula %q: position %d: %s", e.Input, e.Pos, e.Msg)
	}
	return fmt.Sprintf("formula %q: %s", e.Input, e.Msg)
}

// Unwrap makes errors.Is(err, ErrFormula) hold.
func (e *FormulaError) Unwrap() error { return ErrFormula }

// formulaAccepts is appended to syntax errors so that a caller learns the grammar.
const formulaAccepts = "accepted: element symbols (C, H, F, Cl, Br, I, ...) each followed by an optional count, groups in parentheses with an optional count, spaces, '-' and '=' between groups, e.g. CHClF2, CF3CH2F, CH2=CFCF3, (CF3)2CFH"

// Limits that keep parsing of hostile input cheap and the arithmetic far from overflow.
const (
	maxFormulaAtoms = 1_000_000       // largest total count of one element
	maxFormulaCount = maxFormulaAtoms // largest count after one symbol or group: any Hill output re-parses
	maxFormulaDepth = 8               // deepest parenthesis nesting
)

// iupacWeights are the IUPAC abridged standard atomic weights (IUPAC CIAAW, abridged standard atomic weights).
// They are written as decimals and summed as decimals: a molar mass is exact to the places of
// the weights (C2H2F4 is 102.03 g/mol, not 102.03000000000002).
var iupacWeightsExact = map[string]exact.Decimal{
	"H": exact.MustParse("1.008"), "C": exact.MustParse("12.011"), "N": exact.MustParse("14.007"),
	"O": exact.MustParse("15.999"), "F": exact.MustParse("18.998"), "S": exact.MustParse("32.06"),
	"Cl": exact.MustParse("35.45"), "Br": exact.MustParse("79.904"), "I": exact.MustParse("126.90"),
}

// iupacWeights are iupacWeightsExact as floats, for the structural-formula checks.
var iupacWeights = func() map[string]float64 {
	m := make(map[string]float64, len(iupacWeightsExact))
	for el, w := range iupacWeightsExact {
		m[el] = w.Float64()
	}
	return m
}()

// knownElements are the symbols of the 118 named elements (IUPAC periodic table, from memory).
var knownElements = func() map[string]bool {
	const all = "H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn " +
		"Ga Ge As Se Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd " +
		"Pm Sm Eu Gd Tb Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th " +
		"Pa U Np Pu Am Cm Bk Cf Es Fm Md No Lr Rf Db Sg Bh Hs Mt Ds Rg Cn Nh Fl Mc Lv Ts Og"
	m := make(map[string]bool, 118)
	for _, s := range strings.Fields(all) {
		m[s] = true
	}
	return m
}()

// ParseFormula parses a molecular formula in Hill order ("CHClF2", "C2H2F4") or a condensed
// structural formula ("CF3CH2F", "CH3CCl3", "CH2=CFCF3", "(CF3)2CFH") and counts its atoms.
// Spaces are ignored; '-' and '=' may stand between groups; a leading "c-" marks a ring
// ("c-C4F8") and is otherwise ignored. Element symbols are case sensitive. Errors are
// *FormulaError values wrapping ErrFormula.
func ParseFormula(s string) (Formula, error) {
	p := formulaParser{in: s}
	if strings.TrimSpace(s) == "" {
		return nil, p.fail(0, "empty formula; "+formulaAccepts)
	}
	p.skipSpace()
	if strings.HasPrefix(s[p.pos:], "c-") {
		p.pos += 2
	}
	f, err := p.sequence(0)
	if err != nil {
		return nil, err
	}
	if p.pos < len(s) { // only a stray ')' stops sequence before the end
		return nil, p.fail(p.pos+1, "unmatched ')'; "+formulaAccepts)
	}
	if len(f) == 0 {
		return nil, p.fail(0, "no atoms; "+formulaAccepts)
	}
	return f, nil
}

// formulaParser is a recursive-descent parser over the bytes of one formula.
type formulaParser struct {
	in  string
	pos int // byte offset of the next unread byte
}

func (p *formulaParser) fail(pos int, msg string) *FormulaError {
	return &FormulaError{Input: p.in, Pos: pos, Msg: msg}
}

func (p *formulaParser) skipSpace() {
	for p.pos < len(p.in) && (p.in[p.pos] == ' ' || p.in[p.pos] == '\t') {
		p.pos++
	}
}

// sequence parses groups up to the end of input or a ')' and returns their atoms.
func (p *formulaParser) sequence(depth int) (Formula, error) {
	f := Formula{}
	lastWasBond := true // no bond marker may open a sequence
	for {
		p.skipSpace()
		if p.pos >= len(p.in) || p.in[p.pos] == ')' {
			if lastWasBond && len(f) > 0 {
				return nil, p.fail(p.pos, "bond marker at the end of a group; "+formulaAccepts)
			}
			return f, nil
		}
		c := p.in[p.pos]
		switch {
		case c == '-' || c == '=':
			if lastWasBond {
				return nil, p.fail(p.pos+1, fmt.Sprintf("bond marker %q must stand between two groups; %s", c, formulaAccepts))
			}
			p.pos++
			lastWasBond = true
			continue
		case c == '(':
			if depth >= maxFormulaDepth {
				return nil, p.fail(p.pos+1, fmt.Sprintf("parentheses nested deeper than %d", maxFormulaDepth))
			}
			open := p.pos
			p.pos++
			inner, err := p.sequence(depth + 1)
			if err != nil {
				return nil, err
			}
			if p.pos >= len(p.in) {
				return nil, p.fail(open+1, "'(' is never closed; "+formulaAccepts)
			}
			if len(inner) == 0 {
				return nil, p.fail(open+1, "empty parentheses; "+formulaAccepts)
			}
			p.pos++ // ')'
			n, err := p.count()
			if err != nil {
				return nil, err
			}
			for el, k := range inner {
				if err := p.add(f, el, k*n); err != nil {
					return nil, err
				}
			}
		case c >= 'A' && c <= 'Z':
			el, err := p.symbol()
			if err != nil {
				return nil, err
			}
			n, err := p.count()
			if err != nil {
				return nil, err
			}
			if err := p.add(f, el, n); err != nil {
				return nil, err
			}
		case c >= 'a' && c <= 'z':
			return nil, p.fail(p.pos+1, fmt.Sprintf("lowercase letter %q cannot start an element symbol (symbols start with a capital: Cl, not cl); %s", c, formulaAccepts))
		case c >= '0' && c <= '9':
			return nil, p.fail(p.pos+1, "a count must follow an element symbol or ')'; "+formulaAccepts)
		default:
			r, _ := utf8.DecodeRuneInString(p.in[p.pos:])
			return nil, p.fail(p.pos+1, fmt.Sprintf("character %q is not accepted; %s", r, formulaAccepts))
		}
		lastWasBond = false
	}
}

// symbol reads one element symbol: a capital letter and, when it forms a known symbol, one
// lowercase letter.
func (p *formulaParser) symbol() (string, error) {
	start := p.pos
	if p.pos+1 < len(p.in) && p.in[p.pos+1] >= 'a' && p.in[p.pos+1] <= 'z' {
		two := p.in[p.pos : p.pos+2]
		if knownElements[two] {
			p.pos += 2
			return two, nil
		}
		if !knownElements[two[:1]] {
			return "", p.fail(start+1, fmt.Sprintf("unknown element %q; %s", two, formulaAccepts))
		}
	}
	one := p.in[p.pos : p.pos+1]
	if !knownElements[one] {
		return "", p.fail(start+1, fmt.Sprintf("unknown element %q; %s", one, formulaAccepts))
	}
	p.pos++
	return one, nil
}

// count reads an optional count; a missing count is 1.
func (p *formulaParser) count() (int, error) {
	start := p.pos
	for p.pos < len(p.in) && p.in[p.pos] >= '0' && p.in[p.pos] <= '9' {
		p.pos++
	}
	if p.pos == start {
		return 1, nil
	}
	digits := p.in[start:p.pos]
	if digits[0] == '0' {
		return 0, p.fail(start+1, fmt.Sprintf("count %q: counts are whole numbers 1-%d without leading zeros", digits, maxFormulaCount))
	}
	n, err := strconv.Atoi(digits)
	if err != nil || n > maxFormulaCount {
		return 0, p.fail(start+1, fmt.Sprintf("count %q is larger than %d", digits, maxFormulaCount))
	}
	return n, nil
}

func (p *formulaParser) add(f Formula, el string, n int) error {
	if f[el]+n > maxFormulaAtoms {
		return p.fail(0, fmt.Sprintf("more than %d atoms of %s", maxFormulaAtoms, el))
	}
	f[el] += n
	return nil
}

// Hill returns the formula in Hill order: carbon first, hydrogen second, then the other
// elements alphabetically; without carbon every element is alphabetical. A count of 1 is not
// written. Elements with a count below 1 are left out.
func (f Formula) Hill() string {
	els := make([]string, 0, len(f))
	for el, n := range f {
		if n > 0 {
			els = append(els, el)
		}
	}
	hasC := f["C"] > 0
	rank := func(el string) int {
		switch {
		case hasC && el == "C":
			return 0
		case hasC && el == "H":
			return 1
		}
		return 2
	}
	sort.Slice(els, func(i, j int) bool {
		ri, rj := rank(els[i]), rank(els[j])
		if ri != rj {
			return ri < rj
		}
		return els[i] < els[j]
	})
	var b strings.Builder
	for _, el := range els {
		b.WriteString(el)
		if n := f[el]; n > 1 {
			b.WriteString(strconv.Itoa(n))
		}
	}
	return b.String()
}

// String returns the Hill formula.
func (f Formula) String() string { return f.Hill() }

// MolarMass returns the molar mass in g/mol computed with the IUPAC abridged standard atomic
// weights of iupacWeights. It fails (wrapping ErrNoAtomicWeight) for an element outside that
// list, and (wrapping ErrFormula) for an empty formula or a negative count.
func (f Formula) MolarMass() (float64, error) {
	m, err := f.MolarMassExact()
	return m.Float64(), err
}

// MolarMassExact is MolarMass as an exact decimal: the sum of count × weight over the
// elements, with the weights of iupacWeightsExact.
func (f Formula) MolarMassExact() (exact.Decimal, error) {
	total := exact.Zero
	atoms := 0
	for _, el := range formulaElements(f) {
		n := f[el]
		if n < 0 {
			return exact.Zero, fmt.Errorf("%w: element %s has a negative count %d", ErrFormula, el, n)
		}
		if n == 0 {
			continue
		}
		w, ok := iupacWeightsExact[el]
		if !ok {
			return exact.Zero, fmt.Errorf("%w: %s (weights are carried for H, C, N, O, F, S, Cl, Br, I)", ErrNoAtomicWeight, el)
		}
		total = total.Add(w.Mul(exact.FromInt(int64(n))))
		atoms += n
	}
	if atoms == 0 {
		return exact.Zero, fmt.Errorf("%w: empty formula has no molar mass", ErrFormula)
	}
	return total, nil
}

// Equal reports whether f and g hold the same atoms; elements with a zero count are ignored.
func (f Formula) Equal(g Formula) bool {
	for el, n := range f {
		if n != 0 && g[el] != n {
			return false
		}
	}
	for el, n := range g {
		if n != 0 && f[el] != n {
			return false
		}
	}
	return true
}

// Count returns the number of atoms of element el (0 when absent).
func (f Formula) Count(el string) int { return f[el] }

func formulaElements(f Formula) []string {
	els := make([]string, 0, len(f))
	for el := range f {
		els = append(els, el)
	}
	sort.Strings(els)
	return els
}

// chainCarbon holds the atoms bonded to one carbon of a straight chain, indexed by
// substituent kind (see substituentKinds).
type chainCarbon [nSubst]int

// Substituent kinds that the numbering rules know.
const (
	substH = iota
	substF
	substCl
	substBr
	substI
	nSubst
)

var substituentKinds = [nSubst]string{"H", "F", "Cl", "Br", "I"}

func (c chainCarbon) total() int {
	t := 0
	for _, n := range c {
		t += n
	}
	return t
}

// mass sums the atomic weights of the atoms on the carbon (the ISO 817 symmetry measure).
func (c chainCarbon) mass() float64 {
	m := 0.0
	for k, n := range c {
		m += iupacWeights[substituentKinds[k]] * float64(n)
	}
	return m
}

// chainAccepts tells a caller how to write a structure for the numbering rules.
const chainAccepts = "accepted: a straight chain written carbon by carbon, each C followed by its H, F, Cl, Br, I atoms with counts, e.g. CHClF2, CH2FCF3, CHF2CH2CF3"

// parseChain reads a condensed structural formula of a straight carbon chain ("CH2FCF3",
// "CF3CF=CH2") into its carbons and the order of each carbon-carbon bond (1 or 2; len(chain)-1
// of them). Branches, rings and elements other than C, H, F, Cl, Br and I are rejected;
// valences are checked by checkChainValence.
func parseChain(s string) ([]chainCarbon, []int, error) {
	fail := func(pos int, msg string) error { return &FormulaError{Input: s, Pos: pos, Msg: msg} }
	var chain []chainCarbon
	var orders []int
	pending := 1  // order of the bond to the next carbon
	bond := false // a '-' or '=' was just read
	for i := 0; i < len(s); {
		c := s[i]
		switch {
		case c == ' ' || c == '\t':
			i++
			continue
		case c == '-' || c == '=':
			if len(chain) == 0 || bond {
				return nil, nil, fail(i+1, fmt.Sprintf("bond marker %q must stand between two carbons; %s", c, chainAccepts))
			}
			if c == '=' {
				pending = 2
			}
			bond = true
			i++
			continue
		case c == 'C' && (i+1 >= len(s) || s[i+1] != 'l'):
			if len(chain) > 0 {
				orders = append(orders, pending)
			}
			pending = 1
			chain = append(chain, chainCarbon{})
			bond = false
			i++
			if i < len(s) && s[i] >= '0' && s[i] <= '9' {
				return nil, nil, fail(i+1, "a carbon count is not a structure: write each carbon with its own atoms; "+chainAccepts)
			}
			continue
		}
		if len(chain) == 0 {
			return nil, nil, fail(i+1, "a structure starts with a carbon; "+chainAccepts)
		}
		if bond {
			return nil, nil, fail(i+1, "a bond marker must be followed by a carbon; "+chainAccepts)
		}
		kind := -1
		for k, sym := range substituentKinds {
			if strings.HasPrefix(s[i:], sym) && (len(sym) == 2 || i+1 >= len(s) || s[i+1] < 'a' || s[i+1] > 'z') {
				kind = k
				i += len(sym)
				break
			}
		}
		if kind < 0 {
			r, _ := utf8.DecodeRuneInString(s[i:])
			return nil, nil, fail(i+1, fmt.Sprintf("%q is not accepted in a chain structure; %s", r, chainAccepts))
		}
		start := i
		for i < len(s) && s[i] >= '0' && s[i] <= '9' {
			i++
		}
		n := 1
		if i > start {
			v, err := strconv.Atoi(s[start:i])
			if err != nil || v < 1 || v > 4 || s[start] == '0' {
				return nil, nil, fail(start+1, fmt.Sprintf("count %q: a carbon carries 1 to 4 atoms of a kind", s[start:i]))
			}
			n = v
		}
		chain[len(chain)-1][kind] += n
	}
	if len(chain) == 0 {
		return nil, nil, fail(0, "no carbon; "+chainAccepts)
	}
	if bond {
		return nil, nil, fail(len(s), "bond marker at the end; "+chainAccepts)
	}
	return chain, orders, nil
}

// checkChainValence verifies that every carbon of a chain has four bonds.
func checkChainValence(s string, chain []chainCarbon, orders []int) error {
	for i, c := range chain {
		want := 4
		if i > 0 {
			want -= orders[i-1]
		}
		if i < len(orders) {
			want -= orders[i]
		}
		if got := c.total(); got != want {
			return &FormulaError{Input: s, Msg: fmt.Sprintf("carbon %d carries %d atoms besides its carbon neighbours but needs %d to have four bonds; %s", i+1, got, want, chainAccepts)}
		}
	}
	return nil
}

// chainFormula counts the atoms of a chain.
func chainFormula(chain []chainCarbon) Formula {
	f := Formula{"C": len(chain)}
	for _, c := range chain {
		for k, n := range c {
			if n > 0 {
				f[substituentKinds[k]] += n
			}
		}
	}
	return f
}

// massClose compares two sums of atomic weights.
func massClose(a, b float64) bool { return math.Abs(a-b) < 1e-6 }
