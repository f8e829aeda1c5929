package terms

import (
	"database/sql/driver"
	"errors"
	"fmt"
	"strings"
)

// ErrUnknownValue is wrapped by the Parse functions when the text is not one of the accepted
// words.
var ErrUnknownValue = errors.New("unknown value")

// Key reduces s to lower-case letters and digits, dropping hyphens, underscores and spaces,
// so that "Re-Export", "re_export" and "RE EXPORT" all give "reexport". It returns "" when s
// holds any other character or is longer than 48 bytes. It does not allocate for inputs it
// rejects or when s is already reduced.
func Key(s string) string {
	var buf [48]byte
	n := 0
	changed := false
	for i := 0; i < len(s); i++ {
		c := s[i]
		switch {
		case c >= 'a' && c <= 'z', c >= '0' && c <= '9':
		case c >= 'A' && c <= 'Z':
			c += 'a' - 'A'
			changed = true
		case c == '-' || c == '_' || c == ' ' || c == '\t':
			changed = true
			continue
		default:
			return ""
		}
		if n == len(buf) {
			return ""
		}
		buf[n] = c
		n++
	}
	if !changed {
		return s
	}
	return string(buf[:n])
}

// Cut shortens s to at most 80 bytes for use in a message, without splitting a UTF-8
// sequence.
func Cut(s string) string {
	const max = 80
	if len(s) <= max {
		return s
	}
	i := max
	for i > 0 && s[i]&0xC0 == 0x80 {
		i--
	}
	return s[:i] + "…"
}

// vocab is the text form of one enumeration: names[i] is the word of value i (names[0] is
// "", the unspecified value), aliases maps further reduced spellings to values.
type vocab struct {
	what    string // the concept, for messages: "direction", "party type"
	prefix  string // reduced wire-name prefix: "direction" for DIRECTION_IMPORT
	names   []string
	aliases map[string]int
}

func (v *vocab) name(i int, kind string) string {
	if i < 0 || i >= len(v.names) {
		return fmt.Sprintf("%s(%d)", kind, i)
	}
	return v.names[i]
}

func (v *vocab) accepted() string { return strings.Join(v.names[1:], ", ") }

func (v *vocab) parse(s string) (int, error) {
	k := Key(s)
	if k == "" {
		if strings.TrimSpace(s) == "" {
			return 0, nil
		}
		return 0, v.unknown(s)
	}
	k = strings.TrimPrefix(k, v.prefix)
	if k == "unspecified" {
		return 0, nil
	}
	for i, n := range v.names[1:] {
		if Key(n) == k {
			return i + 1, nil
		}
	}
	if i, ok := v.aliases[k]; ok {
		return i, nil
	}
	return 0, v.unknown(s)
}

func (v *vocab) unknown(s string) error {
	return fmt.Errorf("%w: %s %q; accepted: %s", ErrUnknownValue, v.what, Cut(s), v.accepted())
}

// scan implements sql.Scanner for a type of this vocabulary: NULL and "" give the
// unspecified value; any other text must be one of the names.
func (v *vocab) scan(src any) (int, error) {
	var s string
	switch x := src.(type) {
	case nil:
		return 0, nil
	case string:
		s = x
	case []byte:
		s = string(x)
	default:
		return 0, fmt.Errorf("%s: cannot scan %T; a text column is expected", v.what, src)
	}
	i, err := v.parse(s)
	if err != nil {
		return 0, fmt.Errorf("stored %w", err)
	}
	return i, nil
}

func (v *vocab) value(i int, kind string) (driver.Value, error) {
	if i < 0 || i >= len(v.names) {
		return nil, fmt.Errorf("%s: %s(%d) is not a known value; accepted: %s", v.what, kind, i, v.accepted())
	}
	return v.names[i], nil
}

func values[E ~int](v *vocab) []E {
	out := make([]E, 0, len(v.names)-1)
	for i := 1; i < len(v.names); i++ {
		out = append(out, E(i))
	}
	return out
}
