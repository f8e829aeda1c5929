package wirejson

import (
	"bytes"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
	"unicode"

	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/proto"
	"google.golang.org/protobuf/reflect/protoreflect"
)

// Doc writes m as one indented JSON document, with a final newline.
func Doc(w io.Writer, m proto.Message) error {
	var b bytes.Buffer
	writeMessage(&b, m.ProtoReflect(), "  ", "")
	b.WriteByte('\n')
	_, err := w.Write(b.Bytes())
	return err
}

// Line is m as one line of JSON Lines, without the newline.
func Line(m proto.Message) []byte {
	var b bytes.Buffer
	writeMessage(&b, m.ProtoReflect(), "", "")
	return b.Bytes()
}

func writeMessage(b *bytes.Buffer, m protoreflect.Message, indent, prefix string) {
	fields := m.Descriptor().Fields()
	first := true
	b.WriteByte('{')
	inner := prefix + indent
	for i := 0; i < fields.Len(); i++ {
		fd := fields.Get(i)
		if fd.Kind() == protoreflect.MessageKind && !fd.IsList() && !fd.IsMap() && !m.Has(fd) {
			continue // an unset message: unknown, so absent
		}
		if fd.HasOptionalKeyword() && !m.Has(fd) {
			continue
		}
		if !first {
			b.WriteByte(',')
		}
		first = false
		newline(b, indent, inner)
		writeString(b, string(fd.Name()))
		b.WriteByte(':')
		if indent != "" {
			b.WriteByte(' ')
		}
		writeFieldValue(b, fd, m.Get(fd), indent, inner)
	}
	if !first {
		newline(b, indent, prefix)
	}
	b.WriteByte('}')
}

func newline(b *bytes.Buffer, indent, prefix string) {
	if indent != "" {
		b.WriteByte('\n')
		b.WriteString(prefix)
	}
}

func writeFieldValue(b *bytes.Buffer, fd protoreflect.FieldDescriptor, v protoreflect.Value, indent, prefix string) {
	switch {
	case fd.IsList():
		l := v.List()
		if l.Len() == 0 {
			b.WriteString("[]")
			return
		}
		b.WriteByte('[')
		inner := prefix + indent
		for i := 0; i < l.Len(); i++ {
			if i > 0 {
				b.WriteByte(',')
			}
			newline(b, indent, inner)
			writeSingular(b, fd, l.Get(i), indent, inner)
		}
		newline(b, indent, prefix)
		b.WriteByte(']')
	case fd.IsMap():
		mp := v.Map()
		if mp.Len() == 0 {
			b.WriteString("{}")
			return
		}
		type entry struct {
			key string
			val protoreflect.Value
		}
		var entries []entry
		mp.Range(func(k protoreflect.MapKey, v protoreflect.Value) bool {
			entries = append(entries, entry{k.String(), v})
			return true
		})
		sort.Slice(entries, func(i, j int) bool { return entries[i].key < entries[j].key })
		b.WriteByte('{')
		inner := prefix + indent
		for i, e := range entries {
			if i > 0 {
				b.WriteByte(',')
			}
			newline(b, indent, inner)
			writeString(b, e.key)
			b.WriteByte(':')
			if indent != "" {
				b.WriteByte(' ')
			}
			writeSingular(b, fd.MapValue(), e.val, indent, inner)
		}
		newline(b, indent, prefix)
		b.WriteByte('}')
	default:
		writeSingular(b, fd, v, indent, prefix)
	}
}

func writeSingular(b *bytes.Buffer, fd protoreflect.FieldDescriptor, v protoreflect.Value, indent, prefix string) {
	switch fd.Kind() {
	case protoreflect.MessageKind, protoreflect.GroupKind:
		writeMessage(b, v.Message(), indent, prefix)
	case protoreflect.EnumKind:
		writeString(b, EnumWord(fd.Enum(), v.Enum()))
	case protoreflect.BoolKind:
		b.WriteString(strconv.FormatBool(v.Bool()))
	case protoreflect.StringKind:
		writeString(b, v.String())
	case protoreflect.BytesKind:
		writeString(b, base64.StdEncoding.EncodeToString(v.Bytes()))
	case protoreflect.FloatKind:
		writeFloat(b, v.Float(), 32)
	case protoreflect.DoubleKind:
		writeFloat(b, v.Float(), 64)
	case protoreflect.Uint32Kind, protoreflect.Fixed32Kind, protoreflect.Uint64Kind, protoreflect.Fixed64Kind:
		b.WriteString(strconv.FormatUint(v.Uint(), 10))
	default: // the signed integer kinds
		b.WriteString(strconv.FormatInt(v.Int(), 10))
	}
}

func writeFloat(b *bytes.Buffer, f float64, bits int) {
	if math.IsNaN(f) || math.IsInf(f, 0) {
		writeString(b, fmt.Sprint(f)) // JSON has no number for these
		return
	}
	if bits == 32 {
		f = float64(float32(f))
	}
	b.WriteString(decimalText(f))
}

// displayDigits is the number of significant digits figures are shown with. The
// register's figures are exact to 9 decimals of a kilogram and tonnages to 12 digits
// at most, so 12 significant digits keep every digit that means something and drop the
// noise that binary floating point adds to sums (10.860506999999998 is 10.860507).
const displayDigits = 12

// decimalText is v rounded to displayDigits significant digits, in plain decimal notation
// without trailing zeros and without "-0".
func decimalText(v float64) string {
	if v == 0 || math.IsNaN(v) || math.IsInf(v, 0) {
		return strconv.FormatFloat(math.Abs(v), 'f', -1, 64)
	}
	r, _ := strconv.ParseFloat(strconv.FormatFloat(v, 'g', displayDigits, 64), 64)
	if r == 0 {
		return "0"
	}
	return strconv.FormatFloat(r, 'f', -1, 64)
}

func writeString(b *bytes.Buffer, s string) {
	enc, _ := json.Marshal(s) // a string always marshals
	b.Write(enc)
}

// EnumWord is an enum value in the dialect: QUOTA_UNIT_CO2E_TONNES of QuotaUnit is
// "co2e-tonnes".
func EnumWord(ed protoreflect.EnumDescriptor, n protoreflect.EnumNumber) string {
	vd := ed.Values().ByNumber(n)
	if vd == nil {
		return strconv.Itoa(int(n))
	}

	prefix := upperSnake(string(ed.Name())) + "_"
	if z := string(ed.Values().Get(0).Name()); strings.HasSuffix(z, "_UNSPECIFIED") {
		prefix = strings.TrimSuffix(z, "UNSPECIFIED") // the style guide's zero value names the prefix
	}
	return strings.ReplaceAll(strings.ToLower(strings.TrimPrefix(string(vd.Name()), prefix)), "_", "-")
}

// upperSnake turns QuotaUnit into QUOTA_UNIT.
func upperSnake(s string) string {
	var b strings.Builder
	for i, r := range s {
		if i > 0 && unicode.IsUpper(r) {
			b.WriteByte('_')
		}
		b.WriteRune(unicode.ToUpper(r))
	}
	return b.String()
}

// Unmarshal reads JSON of the dialect (or protobuf JSON) into m: enum words go
// back to their value names, then protojson reads the rest, which takes snake_case names,
// numbers for integers and every field at its zero value.
func Unmarshal(b []byte, m proto.Message) error {
	dec := json.NewDecoder(bytes.NewReader(b))
	dec.UseNumber()
	var v any
	if err := dec.Decode(&v); err != nil {
		return err
	}
	v = enumNamesBack(v, m.ProtoReflect().Descriptor())
	out, err := json.Marshal(v)
	if err != nil {
		return err
	}
	return protojson.Unmarshal(out, m)
}

func enumNamesBack(v any, md protoreflect.MessageDescriptor) any {
	obj, ok := v.(map[string]any)
	if !ok {
		return v
	}
	for k, val := range obj {
		fd := md.Fields().ByName(protoreflect.Name(k))
		if fd == nil {
			fd = md.Fields().ByJSONName(k)
		}
		if fd == nil {
			continue
		}
		one := func(x any) any {
			if fd.IsMap() {
				fd := fd.MapValue()
				if fd.Kind() == protoreflect.MessageKind {
					return enumNamesBack(x, fd.Message())
				}
				if fd.Kind() == protoreflect.EnumKind {
					return enumNameOf(fd.Enum(), x)
				}
				return x
			}
			switch fd.Kind() {
			case protoreflect.MessageKind:
				return enumNamesBack(x, fd.Message())
			case protoreflect.EnumKind:
				return enumNameOf(fd.Enum(), x)
			case protoreflect.StringKind:
				// A figure written as a JSON number in an input file is read as the
				// decimal it spells (the decoder keeps its text): 12.5 is "12.5".
				if n, ok := x.(json.Number); ok {
					return string(n)
				}
			}
			return x
		}
		switch {
		case fd.IsList():
			if l, ok := val.([]any); ok {
				for i := range l {
					l[i] = one(l[i])
				}
			}
		case fd.IsMap():
			if mp, ok := val.(map[string]any); ok {
				for mk := range mp {
					mp[mk] = one(mp[mk])
				}
			}
		default:
			obj[k] = one(val)
		}
	}
	return obj
}

// enumNameOf maps an enum word back to its value name; anything else passes as given.
func enumNameOf(ed protoreflect.EnumDescriptor, x any) any {
	s, ok := x.(string)
	if !ok || ed.Values().ByName(protoreflect.Name(s)) != nil {
		return x
	}
	vals := ed.Values()
	for i := 0; i < vals.Len(); i++ {
		if EnumWord(ed, vals.Get(i).Number()) == s {
			return string(vals.Get(i).Name())
		}
	}
	return x
}
