package substances

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
)

// ErrDesignation is wrapped by every error for text that is not a valid designation.
var ErrDesignation = errors.New("invalid designation")

// ErrNotSingleCompound is wrapped when a well-formed designation names something whose
// formula the numbering does not encode: a 400-series (zeotropic) or 500-series (azeotropic)
// blend, a 600-series organic or an inorganic compound (700 plus molar mass, so 7xx to 9xx),
// or an ether (R-E170). Such names are resolved by looking them up.
var ErrNotSingleCompound = errors.New("designation is not decodable to a single compound formula")

// ErrIsomerRule is wrapped when an isomer suffix is asked for a structure the implemented
// rules do not cover (olefins with several isomers, chains of four or more carbons).
var ErrIsomerRule = errors.New("no isomer suffix rule for this structure")

// Designation is a decoded ASHRAE 34 / ISO 817 designation.
type Designation struct {
	// Prefix is the class prefix as written, normalized: "R", "CFC", "HCFC", "HFC", "HBFC",
	// "FC", "PFC", "HFO", "HCFO" or "halon".
	Prefix string
	// Number is the refrigerant number with its suffixes, normalized: "22", "134a", "13B1",
	// "245fa", "1234ze(E)", "C318", "43-10mee", "404A"; for the halon prefix the halon number,
	// "1301".
	Number string
	// Formula is the decoded formula; nil when the number is not decodable (see
	// ErrNotSingleCompound).
	Formula Formula
	// Isomer holds the isomer letters and any (E)/(Z) mark: "a", "fa", "ze(E)". Empty means
	// the most symmetric isomer in ASHRAE usage, or the whole isomer group where the treaty
	// annexes list a formula without letters (HCFC-133, HCFC-225).
	Isomer string
}

// designationPrefixes in matching order: a longer prefix before any prefix it starts with.
var designationPrefixes = []string{"halon", "HCFC", "HCFO", "HBFC", "CFC", "HFC", "HFO", "PFC", "FC", "R"}

const designationAccepts = "accepted: a prefix R, CFC, HCFC, HFC, HBFC, FC, PFC, HFO, HCFO or halon, an optional '-' or space, then a number such as 22, 134a, 13B1, 245fa, 1234yf, 1234ze(E), C318, 43-10mee, 404A; halon numbers have 3 to 5 digits (halon-1301)"

func designationError(input, format string, args ...any) error {
	return fmt.Errorf("%w %q: %s", ErrDesignation, input, fmt.Sprintf(format, args...))
}

// ParseDesignation decodes a designation such as "R-22", "HCFC 22", "hcfc-22", "R-13B1",
// "HBFC-22B1", "halon-1301", "HFC-134a", "HFC-245fa", "HFC-43-10mee", "R-1234yf",
// "HFO-1234ze(E)" or "PFC-C318". Methane, ethane and propane series numbers are decoded by
// the number-plus-90 rule (digits C-1, H+1, F, chlorine by difference, "B"n bromine and "I"n
// iodine replacing chlorine); a fourth leading digit counts C=C double bonds; a leading "C"
// marks a ring. Impossible numbers (negative chlorine, isomer letters that no isomer of the
// formula carries, a class prefix that does not fit the formula such as "HFC-22") are
// rejected with an error wrapping ErrDesignation that says why. Blends (4xx, 5xx), 6xx and
// 7xx-9xx numbers and ethers return the Designation with Prefix and Number filled, a nil Formula
// and an error wrapping ErrNotSingleCompound.
func ParseDesignation(s string) (Designation, error) {
	in := strings.TrimSpace(s)
	if in == "" {
		return Designation{}, designationError(s, "empty; %s", designationAccepts)
	}
	prefix := ""
	for _, p := range designationPrefixes {
		if len(in) >= len(p) && strings.EqualFold(in[:len(p)], p) {
			prefix = p
			break
		}
	}
	if prefix == "" {
		return Designation{}, designationError(s, "unknown prefix; %s", designationAccepts)
	}
	rest := strings.TrimLeft(in[len(prefix):], " ")
	for _, sep := range []string{"-", "\u2010", "\u2011", "\u2013"} {
		if r, ok := strings.CutPrefix(rest, sep); ok {
			rest = strings.TrimLeft(r, " ")
			break
		}
	}
	if rest == "" {
		return Designation{}, designationError(s, "no number after the prefix %s; %s", prefix, designationAccepts)
	}
	if prefix == "halon" {
		number := rest
		if len(number) == 5 && number[4] == '0' {
			number = number[:4] // a trailing 0 for iodine may be omitted
		}
		f, err := HalonFormula(number)
		if err != nil {
			return Designation{}, err
		}
		return Designation{Prefix: prefix, Number: number, Formula: f}, nil
	}
	n, err := parseRNumber(s, rest)
	if err != nil {
		return Designation{}, err
	}
	d := Designation{Prefix: prefix, Number: n.String()}
	if n.series != seriesCompound {
		return d, fmt.Errorf("%w: %q is %s; look it up by name", ErrNotSingleCompound, s, n.series.what())
	}
	f, err := n.decode(s)
	if err != nil {
		return Designation{}, err
	}
	if err := n.checkIsomer(s, f); err != nil {
		return Designation{}, err
	}
	if cls := classPrefix(f, n.dbl); !prefixFits(prefix, cls) {
		fix := "R-" + d.Number
		if cls != "R" {
			fix += " or " + cls + "-" + d.Number
		}
		return Designation{}, designationError(s, "the number decodes to %s, but the prefix %s names %s; write %s", f.Hill(), prefix, prefixMeaning[prefix], fix)
	}
	d.Formula = f
	d.Isomer = n.letters
	if n.stereo != "" {
		d.Isomer += "(" + n.stereo + ")"
	}
	return d, nil
}

// Canonical returns the designation in one normal spelling: "R-" and the number ("R-22",
// "R-13B1", "R-134a", "R-404A") whatever class prefix was written, or "halon-" and the halon
// number for halon designations. The zero Designation gives "".
func (d Designation) Canonical() string {
	switch {
	case d.Number == "":
		return ""
	case d.Prefix == "halon":
		return "halon-" + d.Number
	}
	return "R-" + d.Number
}

// Series of refrigerant numbers.
type numberSeries int

const (
	seriesCompound  numberSeries = iota // decodable methane, ethane, propane, butane ... series
	seriesBlend                         // 400 and 500 series
	seriesOrganic                       // 600 series
	seriesInorganic                     // 700 series
	seriesEther                         // E-prefixed numbers
)

func (s numberSeries) what() string {
	switch s {
	case seriesBlend:
		return "a blend number (400 series zeotropes, 500 series azeotropes); its components are not encoded in the number"
	case seriesOrganic:
		return "a 600-series number (miscellaneous organic compounds, numbered serially)"
	case seriesInorganic:
		return "an inorganic compound number (700 plus molar mass)"
	case seriesEther:
		return "an ether number (E prefix), which this decoder does not cover"
	}
	return "a compound number"
}

// rNumber is the parsed number part of a designation.
type rNumber struct {
	series  numberSeries
	cyclic  bool
	digits  string // as written: "134", "1234", "43-10"
	dbl     int    // C=C double bonds
	c, h, f int
	br, io  int
	letters string // isomer letters, lower case ("a", "fa", "mzz"); blend or series letter otherwise
	stereo  string // "E", "Z" or ""
}

// String writes the number in normal form: letters before the bromine and iodine suffixes.
func (n rNumber) String() string {
	var b strings.Builder
	switch n.series {
	case seriesEther:
		b.WriteString("E")
	case seriesCompound:
		if n.cyclic {
			b.WriteString("C")
		}
	}
	b.WriteString(n.digits)
	b.WriteString(n.letters)
	if n.br > 0 {
		b.WriteString("B" + strconv.Itoa(n.br))
	}
	if n.io > 0 {
		b.WriteString("I" + strconv.Itoa(n.io))
	}
	if n.stereo != "" {
		b.WriteString("(" + n.stereo + ")")
	}
	return b.String()
}

func isASCIIDigit(c byte) bool { return c >= '0' && c <= '9' }

func isASCIILetter(c byte) bool { return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') }

// parseRNumber splits the number part ("134a", "C318", "43-10mee", "22B1", "1234ze(E)").
func parseRNumber(input, rest string) (rNumber, error) {
	var n rNumber
	i := 0
	switch {
	case len(rest) > 1 && (rest[0] == 'C' || rest[0] == 'c') && (isASCIIDigit(rest[1]) || (rest[1] == '-' && len(rest) > 2 && isASCIIDigit(rest[2]))):
		n.cyclic = true
		i = 1
		if rest[1] == '-' {
			i = 2
		}
	case len(rest) > 1 && (rest[0] == 'E' || rest[0] == 'e') && isASCIIDigit(rest[1]):
		n.series = seriesEther
		i = 1
	}
	j := i
	for j < len(rest) && (isASCIIDigit(rest[j]) || (rest[j] == '-' && j+1 < len(rest) && isASCIIDigit(rest[j+1]) && j > i)) {
		j++
	}
	n.digits = rest[i:j]
	tail := rest[j:]
	if n.digits == "" {
		return n, designationError(input, "no digits in the number; %s", designationAccepts)
	}
	if n.digits[0] == '0' {
		return n, designationError(input, "number %q starts with 0; write it without leading zeros (R-22, not R-022)", n.digits)
	}
	if n.series == seriesEther {
		if !allASCIILetters(tail) || len(tail) > 3 {
			return n, designationError(input, "ether number %q has an unexpected suffix %q", n.digits, tail)
		}
		n.letters = strings.ToLower(tail)
		return n, nil
	}
	groups := strings.Split(n.digits, "-")
	switch {
	case len(groups) == 1 && len(groups[0]) == 1:
		return n, designationError(input, "number %q is too short: the tens digit (hydrogen count plus 1) is missing; %s", n.digits, designationAccepts)
	case len(groups) == 1 && len(groups[0]) == 2:
		n.c, n.h, n.f = 1, int(n.digits[0]-'0')-1, int(n.digits[1]-'0')
	case len(groups) == 1 && len(groups[0]) == 3:
		if !n.cyclic {
			switch lead := n.digits[0]; {
			case lead == '4' || lead == '5':
				return blendNumber(input, n, tail)
			case lead >= '6':
				// 600 series organics; 700 + molar mass for inorganics, which runs past 800
				// (R-846 sulfur hexafluoride, from memory).
				return serialNumber(input, n, tail)
			}
		}
		n.c, n.h, n.f = int(n.digits[0]-'0')+1, int(n.digits[1]-'0')-1, int(n.digits[2]-'0')
	case len(groups) == 1 && len(groups[0]) == 4:
		n.dbl = int(n.digits[0] - '0')
		n.c, n.h, n.f = int(n.digits[1]-'0')+1, int(n.digits[2]-'0')-1, int(n.digits[3]-'0')
	case len(groups) == 2 && len(groups[0]) == 2 && len(groups[1]) == 2,
		len(groups) == 3 && len(groups[0]) == 1 && len(groups[1]) == 1 && len(groups[2]) == 2:
		// 10 or more fluorine atoms: "43-10" = C5H2F10, "5-1-14" = C6F14 (from memory).
		cd := strings.Join(groups[:len(groups)-1], "")
		n.c, n.h = int(cd[0]-'0')+1, int(cd[1]-'0')-1
		n.f, _ = strconv.Atoi(groups[len(groups)-1])
		if n.f < 10 {
			return n, designationError(input, "number %q: the hyphenated form is for 10 or more fluorine atoms; write the digits together", n.digits)
		}
	default:
		return n, designationError(input, "number %q has no known form; %s", n.digits, designationAccepts)
	}
	return n, n.parseSuffix(input, tail)
}

func allASCIILetters(s string) bool {
	for i := 0; i < len(s); i++ {
		if !isASCIILetter(s[i]) {
			return false
		}
	}
	return true
}

// blendNumber accepts an optional single composition letter after a 4xx or 5xx number.
func blendNumber(input string, n rNumber, tail string) (rNumber, error) {
	n.series = seriesBlend
	if len(tail) > 1 || !allASCIILetters(tail) {
		return n, designationError(input, "blend number %s takes at most one composition letter (R-404A, R-507), not %q", n.digits, tail)
	}
	n.letters = strings.ToUpper(tail)
	return n, nil
}

// serialNumber accepts up to two letters after a 6xx, 7xx, 8xx or 9xx number.
func serialNumber(input string, n rNumber, tail string) (rNumber, error) {
	if n.digits[0] == '6' {
		n.series = seriesOrganic
		n.letters = strings.ToLower(tail)
	} else {
		n.series = seriesInorganic
		n.letters = strings.ToUpper(tail)
	}
	if len(tail) > 2 || !allASCIILetters(tail) {
		return n, designationError(input, "number %s takes at most two letters (R-600a), not %q", n.digits, tail)
	}
	return n, nil
}

// parseSuffix reads isomer letters, "B"n, "I"n and a final "(E)" or "(Z)"; letters may be in
// either case (customs papers are often upper case), "B" or "I" followed by a digit counts
// bromine or iodine.
func (n *rNumber) parseSuffix(input, tail string) error {
	for i := 0; i < len(tail); {
		c := tail[i]
		switch {
		case (c == 'B' || c == 'b' || c == 'I' || c == 'i') && i+1 < len(tail) && isASCIIDigit(tail[i+1]):
			j := i + 1
			for j < len(tail) && isASCIIDigit(tail[j]) {
				j++
			}
			v, err := strconv.Atoi(tail[i+1 : j])
			if err != nil || tail[i+1] == '0' || v > 20 {
				return designationError(input, "%q: a B or I suffix takes a count 1-20 without leading zeros", tail[i:j])
			}
			target := &n.br
			if c == 'I' || c == 'i' {
				target = &n.io
			}
			if *target != 0 {
				return designationError(input, "%q appears twice", tail[i:i+1])
			}
			*target = v
			i = j
		case c == '(':
			st := strings.ToUpper(tail[i:])
			if st != "(E)" && st != "(Z)" {
				return designationError(input, "suffix %q: only (E) or (Z) may follow in parentheses, at the end", tail[i:])
			}
			n.stereo = st[1:2]
			i = len(tail)
		case isASCIILetter(c):
			if len(n.letters) >= 4 {
				return designationError(input, "too many isomer letters in %q", tail)
			}
			n.letters += strings.ToLower(string(c))
			i++
		default:
			return designationError(input, "unexpected %q in the number suffix %q; %s", tail[i:i+1], tail, designationAccepts)
		}
	}
	return nil
}

// decode turns a compound number into a formula, rejecting impossible compositions.
func (n rNumber) decode(input string) (Formula, error) {
	if n.h < 0 {
		return nil, designationError(input, "the hydrogen digit of %s is 0, which would mean -1 hydrogen atoms (the digit is the hydrogen count plus 1)", n.digits)
	}
	bonds := 2*n.c + 2
	if n.cyclic {
		if n.c < 3 {
			return nil, designationError(input, "a ring needs at least 3 carbons; C%s has %d", n.digits, n.c)
		}
		if n.dbl > 0 {
			return nil, designationError(input, "unsaturated ring numbers are not decoded")
		}
		bonds = 2 * n.c
	}
	if n.dbl > n.c-1 {
		return nil, designationError(input, "%d double bonds cannot fit in a chain of %d carbons", n.dbl, n.c)
	}
	bonds -= 2 * n.dbl
	cl := bonds - n.h - n.f - n.br - n.io
	if cl < 0 {
		what := fmt.Sprintf("%d H and %d F", n.h, n.f)
		if n.br+n.io > 0 {
			what = fmt.Sprintf("%d H, %d F, %d Br and %d I", n.h, n.f, n.br, n.io)
		}
		return nil, designationError(input, "impossible: %s need more than the %d free bonds of a %d-carbon skeleton (chlorine by difference would be %d)", what, bonds, n.c, cl)
	}
	if n.stereo != "" && n.dbl == 0 {
		return nil, designationError(input, "(E)/(Z) marks a double-bond isomer, but %s has no double bond", n.digits)
	}
	f := Formula{"C": n.c}
	for el, k := range map[string]int{"H": n.h, "F": n.f, "Cl": cl, "Br": n.br, "I": n.io} {
		if k > 0 {
			f[el] = k
		}
	}
	return f, nil
}

// prefixMeaning says which compounds a class prefix names.
var prefixMeaning = map[string]string{
	"CFC":  "a compound of C, Cl and F only",
	"HCFC": "a compound of C, H, Cl and F only, with each of them present",
	"HFC":  "a compound of C, H and F only",
	"HBFC": "a compound of C, H, Br and F only",
	"PFC":  "a compound of C and F only",
	"HFO":  "an unsaturated compound of C, H and F only",
	"HCFO": "an unsaturated compound of C, H, Cl and F only",
}

// classPrefix names the class of a decoded formula; "R" when no class prefix fits.
func classPrefix(f Formula, dbl int) string {
	has := func(el string) bool { return f[el] > 0 }
	if has("I") {
		return "R"
	}
	switch {
	case has("F") && !has("H") && !has("Cl") && !has("Br"):
		return "PFC"
	case has("F") && has("H") && !has("Cl") && !has("Br"):
		if dbl > 0 {
			return "HFO"
		}
		return "HFC"
	case has("F") && has("H") && has("Cl") && !has("Br"):
		if dbl > 0 {
			return "HCFO"
		}
		return "HCFC"
	case has("F") && !has("H") && has("Cl") && !has("Br"):
		return "CFC"
	case has("F") && has("H") && has("Br") && !has("Cl"):
		return "HBFC"
	}
	return "R"
}

// prefixFits says whether a written prefix is right for a compound of class cls. R and FC
// are generic; HFC and HCFC also cover their unsaturated members, as the EU F-gas rules call
// HFO-1234yf an unsaturated HFC.
func prefixFits(prefix, cls string) bool {
	return prefix == "R" || prefix == "FC" || prefix == cls ||
		(prefix == "HFC" && cls == "HFO") || (prefix == "HCFC" && cls == "HCFO")
}

// HalonFormula decodes a halon number: its digits count carbon, fluorine, chlorine, bromine
// and iodine atoms, hydrogen fills the remaining bonds of a saturated chain ("1301" ->
// CBrF3, "1211" -> CBrClF2, "2402" -> C2Br2F4); trailing digits may be omitted when they are
// 0 (a missing iodine digit, "104" for CCl4). Errors wrap ErrDesignation.
func HalonFormula(number string) (Formula, error) {
	if len(number) < 3 || len(number) > 5 || !allASCIIDigits(number) {
		return nil, designationError(number, "a halon number has 3 to 5 digits counting C, F, Cl, Br and I atoms (halon-1301)")
	}
	var k [5]int
	for i := 0; i < len(number); i++ {
		k[i] = int(number[i] - '0')
	}
	c := k[0]
	if c == 0 {
		return nil, designationError(number, "a halon number starts with the carbon count, at least 1")
	}
	h := 2*c + 2 - k[1] - k[2] - k[3] - k[4]
	if h < 0 {
		return nil, designationError(number, "impossible halon: %d halogen atoms exceed the %d bonds of %d carbons", k[1]+k[2]+k[3]+k[4], 2*c+2, c)
	}
	f := Formula{"C": c}
	for i, el := range []string{"H", "F", "Cl", "Br", "I"} {
		v := h
		if i > 0 {
			v = k[i] // k holds C, F, Cl, Br, I; el runs H, F, Cl, Br, I
		}
		if v > 0 {
			f[el] = v
		}
	}
	return f, nil
}

// HalonNumber encodes a saturated straight-chain formula as a halon number: digits for C, F,
// Cl and Br, and a fifth digit for I only when iodine is present (CBrF3 -> "1301").
func HalonNumber(f Formula) (string, error) {
	k := [5]int{f["C"], f["F"], f["Cl"], f["Br"], f["I"]}
	for el, n := range f {
		switch {
		case el != "C" && el != "H" && el != "F" && el != "Cl" && el != "Br" && el != "I":
			return "", designationError(f.Hill(), "halon numbers cover C, H, F, Cl, Br and I, not %s", el)
		case n < 0 || n > 9:
			return "", designationError(f.Hill(), "a halon number has one digit per element; %d %s atoms do not fit", n, el)
		}
	}
	if k[0] < 1 {
		return "", designationError(f.Hill(), "a halon has at least one carbon")
	}
	if h := 2*k[0] + 2 - k[1] - k[2] - k[3] - k[4]; f["H"] != h {
		return "", designationError(f.Hill(), "halon numbers describe saturated chains: %d carbons with these halogens carry %d hydrogen atoms, not %d", k[0], h, f["H"])
	}
	digits := 4
	if k[4] > 0 {
		digits = 5
	}
	var b strings.Builder
	for _, v := range k[:digits] {
		b.WriteByte(byte('0' + v))
	}
	return b.String(), nil
}

// NumberForFormula returns the base number of a formula without isomer letters (C2H2F4 ->
// "134", CHBrF2 -> "22B1", C3H2F4 -> "1234", C5H2F10 -> "43-10"). A formula with free bonds
// left is read as a straight chain with that many C=C double bonds; rings cannot be seen in
// a formula and are not numbered here.
func NumberForFormula(f Formula) (string, error) {
	digits, hal, _, err := rNumberParts(f)
	return digits + hal, err
}

// rNumberParts computes the digits, the bromine/iodine suffix and the double bond count.
func rNumberParts(f Formula) (digits, hal string, dbl int, err error) {
	name := f.Hill()
	for el, n := range f {
		if el != "C" && el != "H" && el != "F" && el != "Cl" && el != "Br" && el != "I" {
			return "", "", 0, designationError(name, "the numbering covers compounds of C, H, F, Cl, Br and I, not %s", el)
		}
		if n < 0 {
			return "", "", 0, designationError(name, "negative count of %s", el)
		}
	}
	c, h, fl := f["C"], f["H"], f["F"]
	if c < 1 {
		return "", "", 0, designationError(name, "no carbon")
	}
	free := 2*c + 2 - h - fl - f["Cl"] - f["Br"] - f["I"]
	switch {
	case free < 0:
		return "", "", 0, designationError(name, "more atoms than the %d bonds of %d chained carbons", 2*c+2, c)
	case free%2 != 0:
		return "", "", 0, designationError(name, "an odd number of free bonds (%d) is not a stable compound", free)
	}
	dbl = free / 2
	switch {
	case dbl > 0 && dbl > c-1:
		return "", "", 0, designationError(name, "%d double bonds do not fit in %d carbons; rings are not numbered from a formula", dbl, c)
	case c-1 > 9 || h+1 > 9 || dbl > 9:
		return "", "", 0, designationError(name, "too many carbon or hydrogen atoms for the digit scheme (names such as R-600 are assigned, not computed)")
	case fl >= 10 && dbl > 0:
		return "", "", 0, designationError(name, "unsaturated compounds with 10 or more fluorine atoms are not numbered here")
	case dbl == 0 && fl < 10 && c >= 5:
		return "", "", 0, designationError(name, "saturated compounds of %d carbons with fewer than 10 fluorine atoms have no number of this form (the 400-900 series are reserved)", c)
	}
	var b strings.Builder
	if dbl > 0 {
		b.WriteString(strconv.Itoa(dbl))
	}
	if dbl > 0 || c > 1 {
		b.WriteString(strconv.Itoa(c - 1))
	}
	b.WriteString(strconv.Itoa(h + 1))
	if fl >= 10 {
		b.WriteString("-") // C5H2F10 -> "43-10", as HFC-43-10mee is written in the Annex
	}
	b.WriteString(strconv.Itoa(fl))
	if n := f["Br"]; n > 0 {
		hal += "B" + strconv.Itoa(n)
	}
	if n := f["I"]; n > 0 {
		hal += "I" + strconv.Itoa(n)
	}
	return b.String(), hal, dbl, nil
}

// EncodeDesignation returns the R- designation of a straight-chain structure written carbon
// by carbon: "CH2FCF3" -> "R-134a", "CHClF2" -> "R-22", "CBrF3" -> "R-13B1",
// "CHF2CH2CF3" -> "R-245fa". Isomer letters come from IsomerSuffix and stand before a B or I
// suffix ("R-114aB2"; that order is from memory). Structures the suffix rules do not cover
// give an error wrapping ErrIsomerRule that names the base number.
func EncodeDesignation(structure string) (string, error) {
	chain, orders, err := parseChain(structure)
	if err != nil {
		return "", err
	}
	if err := checkChainValence(structure, chain, orders); err != nil {
		return "", err
	}
	digits, hal, _, err := rNumberParts(chainFormula(chain))
	if err != nil {
		return "", err
	}
	suffix, err := chainSuffix(structure, chain, orders)
	if err != nil {
		return "", fmt.Errorf("%w (base number R-%s%s)", err, digits, hal)
	}
	return "R-" + digits + suffix + hal, nil
}
