package service

import (
	"strconv"
	"unicode/utf8"

	"google.golang.org/protobuf/encoding/protojson"
	"google.golang.org/protobuf/reflect/protoreflect"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// storedRecordJSON is the record as the register keeps it (shipments.record): its protobuf JSON,
// as protojson.Marshal gives it, but written field by field for the common record, without
// protojson's reflection (a tenth of a recording stream's CPU in the profile; BENCHMARKS.md,
// "Recording: cheaper constraints, fewer round trips"). A record with a composition, an
// enum value without a name or a string that is not UTF-8 goes to protojson itself. The
// column is jsonb, which keeps the value, not the text: the two must agree as JSON values,
// which TestRecordJSONMatchesProtojson checks for every field.
func storedRecordJSON(r *halovetv1.ShipmentRecord) ([]byte, error) {
	if len(r.GetDeclaredComposition()) > 0 || len(r.GetMeasuredComposition()) > 0 ||
		!namedEnum(r.GetDirection()) || !namedEnum(r.GetPurpose()) || !namedEnum(r.GetCondition()) {
		return protojson.Marshal(r)
	}
	b := make([]byte, 0, 512)
	b = append(b, '{')
	first := true
	str := func(name, v string) bool {
		if v == "" {
			return true
		}
		if !utf8.ValidString(v) {
			return false
		}
		b = jsonName(b, &first, name)
		b = jsonString(b, v)
		return true
	}
	num := func(name string, v int64) {
		if v != 0 {
			b = jsonName(b, &first, name)
			b = append(b, '"')
			b = strconv.AppendInt(b, v, 10)
			b = append(b, '"')
		}
	}
	enum := func(name string, v interface {
		Number() protoreflect.EnumNumber
		Descriptor() protoreflect.EnumDescriptor
	}) {
		if v.Number() != 0 {
			b = jsonName(b, &first, name)
			b = jsonString(b, string(v.Descriptor().Values().ByNumber(v.Number()).Name()))
		}
	}
	ok := str("recordKey", r.GetRecordKey())
	num("sourceLine", r.GetSourceLine())
	enum("direction", r.GetDirection())
	ok = str("companyId", r.GetCompanyId()) && ok
	ok = str("licenceNumber", r.GetLicenceNumber()) && ok
	ok = str("partnerCountry", r.GetPartnerCountry()) && ok
	ok = str("declarationDate", r.GetDeclarationDate()) && ok
	ok = str("substance", r.GetSubstance()) && ok
	ok = str("declaredHsCode", r.GetDeclaredHsCode()) && ok
	ok = str("declaredCasNumber", r.GetDeclaredCasNumber()) && ok
	ok = str("declaredFormula", r.GetDeclaredFormula()) && ok
	ok = str("totalNetQuantity", r.GetTotalNetQuantity()) && ok
	ok = str("quantityUnit", r.GetQuantityUnit()) && ok
	num("packageCount", r.GetPackageCount())
	ok = str("netFillPerPackage", r.GetNetFillPerPackage()) && ok
	enum("purpose", r.GetPurpose())
	enum("condition", r.GetCondition())
	if !ok {
		return protojson.Marshal(r) // its error names the field that is not UTF-8
	}
	return append(b, '}'), nil
}

// namedEnum reports whether an enum value has a name (protojson writes a number otherwise).
func namedEnum(v interface {
	Number() protoreflect.EnumNumber
	Descriptor() protoreflect.EnumDescriptor
}) bool {
	return v.Descriptor().Values().ByNumber(v.Number()) != nil
}

func jsonName(b []byte, first *bool, name string) []byte {
	if !*first {
		b = append(b, ',')
	}
	*first = false
	b = append(b, '"')
	b = append(b, name...)
	return append(b, '"', ':')
}

// jsonString appends s (valid UTF-8) as a JSON string.
func jsonString(b []byte, s string) []byte {
	const hex = "0123456789abcdef"
	b = append(b, '"')
	start := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c >= 0x20 && c != '"' && c != '\\' {
			continue
		}
		b = append(b, s[start:i]...)
		switch c {
		case '"', '\\':
			b = append(b, '\\', c)
		case '\n':
			b = append(b, '\\', 'n')
		case '\r':
			b = append(b, '\\', 'r')
		case '\t':
			b = append(b, '\\', 't')
		default:
			b = append(b, '\\', 'u', '0', '0', hex[c>>4], hex[c&0xf])
		}
		start = i + 1
	}
	b = append(b, s[start:]...)
	return append(b, '"')
}
