package validate

import (
	"fmt"
	"math/bits"
	"strconv"
	"strings"
	"unicode"
	"unicode/utf8"

	"github.com/halovet/halovet/substances"
)

// Input limits of one record. They are checked before any other rule, so that no rule, no
// lookup and no answer grows with hostile input, and so that no text the database cannot
// hold (a NUL byte, invalid UTF-8) reaches the store.
const (
	// MaxComponents is the most components a declared or measured composition may list.
	MaxComponents = substances.MaxComponents
	// MaxFindings is the most findings a verdict keeps; when a record gives more, the
	// first MaxFindings (errors first) are kept and one FINDINGS_CAPPED notice counts the rest.
	MaxFindings = 32
	// MinNetMassKg is the smallest net mass a record may declare: one step of the store's
	// numeric(30, 9) columns. A smaller amount would be stored as 0 kg.
	MinNetMassKg = 1e-9
)

// FieldLimit is the longest text, in bytes after trimming spaces, accepted in one field.
type FieldLimit struct {
	Field    string // field (column) name
	MaxBytes int
}

// FieldLimits lists the longest text accepted in each text field of a record. No
// designation, chemical name, CAS number, HS code or formula of the catalogue comes near
// these bounds; a record_key is limited by KEY_INVALID.
var FieldLimits = []FieldLimit{
	{"record_key", maxKeyBytes},
	{"company_id", 64},
	{"licence_number", 64},
	{"partner_country", 16},
	{"declaration_date", 32},
	{"substance", maxIdentifierBytes},
	{"declared_hs_code", 32},
	{"declared_cas_number", 32},
	{"declared_formula", 128},
	{"total_net_quantity", 64},
	{"net_fill_per_package", 64},
	{"quantity_unit", 32},
	{"declared_composition", maxIdentifierBytes}, // per component identifier
	{"measured_composition", maxIdentifierBytes}, // per component identifier
}

func fieldLimit(field string) int {
	for _, l := range FieldLimits {
		if l.Field == field {
			return l.MaxBytes
		}
	}
	return maxIdentifierBytes
}

// TextProblem says why s cannot be accepted as the text of a field, or returns "" when it
// can: invalid UTF-8, a NUL byte or another control character (C0, DEL, C1), a Unicode
// format character (bidirectional controls such as U+202E, zero-width characters such as
// U+200B, the byte-order mark, the soft hyphen) or a line or paragraph separator. The first
// two cannot be stored in PostgreSQL text; the others hide or reorder what a person reads.
func TextProblem(s string) string {
	for i := 0; i < len(s); {
		b := s[i]
		if b < utf8.RuneSelf {
			if b < 0x20 || b == 0x7f {
				return fmt.Sprintf("holds the control character %s at byte %d", runeName(rune(b)), i+1)
			}
			i++
			continue
		}
		r, n := utf8.DecodeRuneInString(s[i:])
		if r == utf8.RuneError && n == 1 {
			return fmt.Sprintf("is not valid UTF-8 (byte %d)", i+1)
		}
		switch {
		case unicode.Is(unicode.Cc, r):
			return fmt.Sprintf("holds the control character %s at byte %d", runeName(r), i+1)
		case unicode.Is(unicode.Cf, r), r == '\u2028', r == '\u2029':
			return fmt.Sprintf("holds the invisible or bidirectional character %s at byte %d", runeName(r), i+1)
		}
		i += n
	}
	return ""
}

// Storable reports whether s can be stored as PostgreSQL text (valid UTF-8 without NUL).
func Storable(s string) bool {
	return utf8.ValidString(s) && strings.IndexByte(s, 0) < 0
}

func runeName(r rune) string {
	if r == 0 {
		return "U+0000 (NUL)"
	}
	return fmt.Sprintf("U+%04X", r)
}

// textAccepted is what the FIELD_TEXT_INVALID message says is accepted.
const textAccepted = "accepted: printable UTF-8 text without control, invisible or bidirectional characters"

// boundsRules checks every text field's characters and length and the size of the
// compositions. It returns false when a field is unusable: the record is then rejected and
// checked no further, so that no rule runs on (and no message repeats) oversized or
// unreadable text.
func (c *checker) boundsRules() bool {
	r := c.r
	ok := true
	text := func(field, s string) {
		s = strings.TrimSpace(s)
		if s == "" {
			return
		}
		if p := TextProblem(s); p != "" {
			c.add(CodeFieldTextInvalid, field, "%s %s; %s; the record was checked no further", field, p, textAccepted)
			ok = false
			return
		}
		if max := fieldLimit(field); len(s) > max {
			c.add(CodeFieldTooLong, field, "%s is %d bytes long; at most %d are accepted; the record was checked no further", field, len(s), max)
			ok = false
		}
	}
	// record_key has its own code (KEY_INVALID, in recordRules); only text the store
	// cannot hold stops the check here.
	if !Storable(r.Key) {
		ok = false
	}
	text("company_id", r.CompanyID)
	text("licence_number", r.LicenceNumber)
	text("partner_country", r.PartnerCountry)
	text("declaration_date", r.DeclarationDate)
	text("substance", r.Substance)
	text("declared_hs_code", r.HSCode)
	text("declared_cas_number", r.CAS)
	text("declared_formula", r.Formula)
	text("total_net_quantity", r.TotalQuantity)
	text("net_fill_per_package", r.FillPerPackage)
	text("quantity_unit", r.Unit)
	if n := len(r.Composition); n > MaxComponents {
		c.add(CodeMixTooMany, "declared_composition", "the declared composition lists %d components; at most %d are accepted; the record was checked no further", n, MaxComponents)
		ok = false
	} else {
		for _, s := range r.Composition {
			text("declared_composition", s.Identifier)
		}
	}
	if n := len(r.Measured); n > MaxComponents {
		c.add(CodeMixTooMany, "measured_composition", "the measured composition lists %d components; at most %d are accepted; the record was checked no further", n, MaxComponents)
		ok = false
	} else {
		for _, s := range r.Measured {
			text("measured_composition", s.Identifier)
		}
	}
	return ok
}

// capFindings keeps at most MaxFindings of the sorted findings fs and adds a notice that
// counts the rest.
func capFindings(fs []Finding) []Finding {
	if len(fs) <= MaxFindings {
		return fs
	}
	left := len(fs) - MaxFindings
	kept := append(fs[:MaxFindings:MaxFindings], newFinding(CodeFindingsCapped, "",
		fmt.Sprintf("%d more findings were left out; a verdict carries at most %d; correct the ones shown and check the record again", left, MaxFindings)))
	return kept
}

// belowStoreStep reports whether q × unit × containers is above zero but below
// MinNetMassKg, computed exactly.
func belowStoreStep(q Decimal, u Unit, containers int64) bool {
	fc, fe := u.factor()
	if fc == 0 || q.Coef == 0 || containers < 0 || containers > maxContainers {
		return false
	}
	hi, lo := bits.Mul64(q.Coef, fc)
	if containers > 1 {
		h2, l2 := bits.Mul64(lo, uint64(containers))
		hi = hi*uint64(containers) + h2
		lo = l2
	}
	// The mass is N × 10^e kg with N = hi·2^64 + lo; it is below 10^-9 kg when N has
	// fewer than -(e+9) digits, i.e. N < 10^-(e+9).
	k := q.Exp + fe + 9
	if k >= 0 {
		return false
	}
	var buf [48]byte
	return len(appendUint128(buf[:0], hi, lo)) <= -k
}

// trimTiny writes a small mass in plain decimals ("0.0000000005").
func trimTiny(kg float64) string {
	return strconv.FormatFloat(kg, 'f', -1, 64)
}
