package validate

import (
	"cmp"
	"crypto/sha256"
	"encoding/hex"
	"hash/maphash"
	"slices"
	"strconv"
	"strings"
	"unicode/utf8"
)

// fingerprintVersion is hashed first; change it whenever the normalization below changes, so
// that fingerprints of different versions never compare equal by accident.
const fingerprintVersion = "halovet-record-v2" // v2: total net quantity, package count and fill per package

// fpDecimal appends a quantity: its normalized decimal when it parses ("1250.50" =
// "1250.5"), else the trimmed text, marked apart.
func fpDecimal(b []byte, text string, pre *parsedDecimal) []byte {
	d, ok := pre.get(text)
	if ok {
		var nb [48]byte
		nd := d.appendNormalized(nb[:0])
		b = append(b, 'n')
		b = fpLen(b, len(nd))
		return append(b, nd...)
	}
	b = append(b, 't')
	return fpField(b, strings.TrimSpace(text))
}

// Fingerprint returns the SHA-256 (lower-case hex) of a record's normalized content. Two
// records with the same fingerprint declare the same shipment; the store saves it with each
// record so that a record sent again under the same key is recognised as a replay, and the same
// key with another fingerprint as a conflict.
//
// Normalization: the record key and source line are left out (they identify, they are not
// content); surrounding spaces are trimmed everywhere; the company id keeps its case; licence
// number and partner country are upper-cased; the substance and composition identifiers are
// lower-cased with inner runs of spaces collapsed; the HS code keeps its digits only; the
// total and the fill per package are written as normalized decimals when they parse ("1250.50" = "1250.5"); the unit,
// direction, purpose and condition are written as their canonical words; composition shares
// are sorted by identifier. Each field is length-prefixed, so no two different field lists
// give the same byte string.
func Fingerprint(r *Record) string { return fingerprintOf(r, nil) }

// fingerprintOf is Fingerprint with what the rules parsed already (pre, may be nil).
func fingerprintOf(r *Record, pre *parsedContent) string {
	var stack [512]byte
	sum := sha256.Sum256(appendContent(stack[:0], r, pre))
	return hex.EncodeToString(sum[:])
}

// contentHash is a 64-bit hash (maphash, not cryptographic) of the same normalized
// content as Fingerprint: a stream in check mode, which stores nothing, tells a replay
// from a conflict by it, at a fraction of the cost of SHA-256. Two different contents
// share a hash with a chance of about 2^-64 per pair.
// pre, when not nil, holds what the rules parsed of the record's quantities and unit, so
// that they are not parsed twice (the content is the same either way).
func contentHash(seed maphash.Seed, r *Record, pre *parsedContent) uint64 {
	var stack [512]byte
	return maphash.Bytes(seed, appendContent(stack[:0], r, pre))
}

// parsedContent is what the rules parsed of a record that its normalized content uses:
// the total and the fill per package (ParseDecimal) and the unit (ParseUnit). A part not
// parsed (the rules stopped before, or skipped the call) is parsed by appendContent.
type parsedContent struct {
	total, fill parsedDecimal
	unit        Unit
	unitState   parseState
}

// parseState says whether a parse was made and how it ended.
type parseState uint8

const (
	notParsed parseState = iota
	parsedOK
	parseFailed
)

// parsedDecimal is the result of ParseDecimal on a field's text, when it was called.
type parsedDecimal struct {
	d     Decimal
	state parseState
}

// get is ParseDecimal(text), from p when it holds the result (p may be nil).
func (p *parsedDecimal) get(text string) (Decimal, bool) {
	if p != nil && p.state != notParsed {
		return p.d, p.state == parsedOK
	}
	if strings.TrimSpace(text) == "" { // ParseDecimal refuses it (and writes an error to say so)
		return Decimal{}, false
	}
	d, err := ParseDecimal(text)
	return d, err == nil
}

// appendContent appends the normalized content of Fingerprint to b; pre (may be nil) is
// what the rules parsed already.
func appendContent(b []byte, r *Record, pre *parsedContent) []byte {
	var total, fill *parsedDecimal
	unit, unitState := UnitUnspecified, notParsed
	if pre != nil {
		total, fill, unit, unitState = &pre.total, &pre.fill, pre.unit, pre.unitState
	}
	b = append(b, fingerprintVersion...)
	b = fpField(b, strings.TrimSpace(r.CompanyID))
	b = fpField(b, r.Direction.String())
	b = fpUpper(b, r.LicenceNumber)
	b = fpUpper(b, r.PartnerCountry)
	b = fpField(b, strings.TrimSpace(r.DeclarationDate))
	b = fpName(b, r.Substance)
	b = fpDigits(b, r.HSCode)
	b = fpField(b, strings.TrimSpace(r.CAS))
	b = fpField(b, strings.TrimSpace(r.Formula))
	b = fpDecimal(b, r.TotalQuantity, total)
	b = fpDecimal(b, r.FillPerPackage, fill)
	if unitState == notParsed {
		u, err := ParseUnit(r.Unit)
		unit, unitState = u, parsedOK
		if err != nil {
			unitState = parseFailed
		}
	}
	if unitState == parsedOK {
		b = fpField(b, unit.String())
	} else {
		b = fpField(b, strings.ToLower(strings.TrimSpace(r.Unit)))
	}
	b = strconv.AppendInt(b, r.PackageCount, 10)
	b = append(b, 0)
	b = fpField(b, r.Purpose.String())
	b = fpField(b, r.Condition.String())
	if len(r.Composition) > 0 {
		shares := make([]DeclaredShare, len(r.Composition))
		for i, s := range r.Composition {
			shares[i] = DeclaredShare{Identifier: normName(s.Identifier), MassPct: s.MassPct}
		}
		slices.SortFunc(shares, func(a, b DeclaredShare) int {
			if c := strings.Compare(a.Identifier, b.Identifier); c != 0 {
				return c
			}
			return cmp.Compare(a.MassPct, b.MassPct)
		})
		b = strconv.AppendInt(b, int64(len(shares)), 10)
		for _, s := range shares {
			b = fpField(b, s.Identifier)
			b = strconv.AppendFloat(b, s.MassPct, 'g', -1, 64)
			b = append(b, 0)
		}
	}
	if len(r.Measured) > 0 {
		// Only records that carry a reading add to the content, so fingerprints of records
		// without one are unchanged. The reading is kept in its order, as measured.
		b = append(b, 'm')
		b = strconv.AppendInt(b, int64(len(r.Measured)), 10)
		for _, s := range r.Measured {
			b = fpField(b, normName(s.Identifier))
			b = strconv.AppendFloat(b, s.MassPct, 'g', -1, 64)
			b = append(b, 0)
			b = strconv.AppendFloat(b, s.Uncertainty, 'g', -1, 64)
			b = append(b, 0)
		}
	}
	b = append(b, '|')
	for _, u := range r.Unreadable {
		b = fpField(b, u.Field)
		b = fpField(b, u.Text)
	}
	return b
}

func fpLen(b []byte, n int) []byte {
	b = strconv.AppendInt(b, int64(n), 10)
	return append(b, ':')
}

func fpField(b []byte, s string) []byte {
	b = fpLen(b, len(s))
	return append(b, s...)
}

func fpUpper(b []byte, s string) []byte {
	s = strings.TrimSpace(s)
	b = fpLen(b, len(s))
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c >= 'a' && c <= 'z' {
			c -= 'a' - 'A'
		}
		b = append(b, c)
	}
	return b
}

func fpDigits(b []byte, s string) []byte {
	n := 0
	for i := 0; i < len(s); i++ {
		if s[i] >= '0' && s[i] <= '9' {
			n++
		}
	}
	b = fpLen(b, n)
	for i := 0; i < len(s); i++ {
		if s[i] >= '0' && s[i] <= '9' {
			b = append(b, s[i])
		}
	}
	return b
}

func fpName(b []byte, s string) []byte {
	return fpField(b, normName(s))
}

// normName lower-cases s, trims it and collapses inner runs of white space to one space. It
// returns s itself when nothing changes.
func normName(s string) string {
	s = strings.TrimSpace(s)
	clean := true
	prevSpace := false
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c >= utf8.RuneSelf || (c >= 'A' && c <= 'Z') || c == '\t' || (c == ' ' && prevSpace) {
			clean = false
			break
		}
		prevSpace = c == ' '
	}
	if clean {
		return s
	}
	return foldName(s)
}

// foldName is strings.Join(strings.Fields(strings.ToLower(s)), " ") in one pass when s is
// ASCII (as identifiers are); other text takes that path.
func foldName(s string) string {
	b := make([]byte, 0, len(s))
	space := false // a space is due before the next word
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= utf8.RuneSelf:
			return strings.Join(strings.Fields(strings.ToLower(s)), " ")
		case c == ' ' || c == '\t' || c == '\n' || c == '\v' || c == '\f' || c == '\r':
			space = len(b) > 0
			continue
		case c >= 'A' && c <= 'Z':
			c += 'a' - 'A'
		}
		if space {
			b = append(b, ' ')
			space = false
		}
		b = append(b, c)
	}
	return string(b)
}
