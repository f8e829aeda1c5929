package wireterms

import (
	"fmt"
	"testing"

	"google.golang.org/protobuf/reflect/protoreflect"

	"github.com/halovet/halovet/access"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// enumCase checks one enum both ways: every value the wire descriptor declares maps to a
// domain value and back to itself, and to the domain value that the domain package's Parse
// reads from the wire name (an independent check that the pair is the right one, not only
// some pair); every domain value (unspecified included) maps to a wire value and back to
// itself. Domain values are compared as any: the terms types are ints, the catalogue's and
// the roles are strings.
type enumCase struct {
	name      string
	desc      protoreflect.EnumDescriptor
	fromWire  func(protoreflect.EnumNumber) (any, bool)
	toWire    func(any) protoreflect.EnumNumber
	parse     func(string) (any, error)
	zero      any
	domain    []any // the unspecified value, then every specified domain value
	stringOfD func(any) string
}

func adapt[W ~int32, D comparable](from func(W) (D, bool), to func(D) W, parse func(string) (D, error), all []D, desc protoreflect.EnumDescriptor, name string) enumCase {
	var zero D
	ds := []any{zero}
	for _, d := range all {
		ds = append(ds, d)
	}
	return enumCase{
		name: name, desc: desc, zero: zero,
		fromWire: func(n protoreflect.EnumNumber) (any, bool) { d, ok := from(W(n)); return d, ok },
		toWire:   func(d any) protoreflect.EnumNumber { return protoreflect.EnumNumber(to(d.(D))) },
		parse:    func(s string) (any, error) { d, err := parse(s); return d, err },
		domain:   ds,
		stringOfD: func(d any) string {
			return fmt.Sprint(d)
		},
	}
}

func cases() []enumCase {
	return []enumCase{
		adapt(DirectionFromWire, DirectionToWire, terms.ParseDirection, terms.Directions(), halovetv1.Direction(0).Descriptor(), "Direction"),
		adapt(PurposeFromWire, PurposeToWire, terms.ParsePurpose, terms.Purposes(), halovetv1.Purpose(0).Descriptor(), "Purpose"),
		adapt(ConditionFromWire, ConditionToWire, terms.ParseCondition, terms.Conditions(), halovetv1.Condition(0).Descriptor(), "Condition"),
		adapt(PartyTypeFromWire, PartyTypeToWire, terms.ParsePartyType, terms.PartyTypes(), halovetv1.PartyType(0).Descriptor(), "PartyType"),
		adapt(HFCGroupFromWire, HFCGroupToWire, terms.ParseHFCGroup, terms.HFCGroups(), halovetv1.HfcGroup(0).Descriptor(), "HfcGroup"),
		adapt(LicenceStatusFromWire, LicenceStatusToWire, terms.ParseLicenceStatus, terms.LicenceStatuses(), halovetv1.LicenceStatus(0).Descriptor(), "LicenceStatus"),
		adapt(QuotaUnitFromWire, QuotaUnitToWire, terms.ParseQuotaUnit, terms.QuotaUnits(), halovetv1.QuotaUnit(0).Descriptor(), "QuotaUnit"),
		adapt(GWPSetFromWire, GWPSetToWire, substances.ParseGWPSet, substances.GWPSets(), halovetv1.GwpSet(0).Descriptor(), "GwpSet"),
		adapt(GWPConventionFromWire, GWPConventionToWire, substances.ParseGWPConvention, substances.GWPConventions(), halovetv1.GwpConvention(0).Descriptor(), "GwpConvention"),
		adapt(HSEditionFromWire, HSEditionToWire, substances.ParseHSEdition, substances.HSEditions(), halovetv1.HsEdition(0).Descriptor(), "HsEdition"),
		adapt(BlendTypeFromWire, BlendTypeToWire, substances.ParseBlendType, substances.BlendTypes(), halovetv1.BlendType(0).Descriptor(), "BlendType"),
		adapt(RoleFromWire, RoleToWire, parseRole, access.Roles, halovetv1.Role(0).Descriptor(), "Role"),
	}
}

// parseRole is access.ParseRole, which refuses every text that names no role (an identity
// provider's claim "role_unspecified" must not read as the anonymous role); the wire's
// UNSPECIFIED is the anonymous role.
func parseRole(s string) (access.Role, error) {
	if s == "ROLE_UNSPECIFIED" {
		return access.RoleAnonymous, nil
	}
	return access.ParseRole(s)
}

func TestEveryWireValueMaps(t *testing.T) {
	for _, c := range cases() {
		t.Run(c.name, func(t *testing.T) {
			vals := c.desc.Values()
			if vals.Len() < 2 {
				t.Fatalf("descriptor %s declares %d values", c.desc.FullName(), vals.Len())
			}
			seen := map[any]protoreflect.Name{}
			for i := 0; i < vals.Len(); i++ {
				v := vals.Get(i)
				d, ok := c.fromWire(v.Number())
				if !ok {
					t.Errorf("%s has no domain value in wireterms; add its pair", v.Name())
					continue
				}
				if back := c.toWire(d); back != v.Number() {
					t.Errorf("%s -> %s -> wire %d, want %d", v.Name(), c.stringOfD(d), back, v.Number())
				}
				want, err := c.parse(string(v.Name()))
				if err != nil {
					t.Errorf("terms cannot read the wire name %s: %v", v.Name(), err)
				} else if want != d {
					t.Errorf("%s maps to %q, but its name reads as %q", v.Name(), c.stringOfD(d), c.stringOfD(want))
				}
				if prev, dup := seen[d]; dup {
					t.Errorf("%s and %s map to the same domain value %q", prev, v.Name(), c.stringOfD(d))
				}
				seen[d] = v.Name()
			}
			for _, d := range c.domain {
				w := c.toWire(d)
				if vals.ByNumber(w) == nil {
					t.Errorf("domain %q maps to wire number %d, which %s does not declare", c.stringOfD(d), w, c.desc.FullName())
					continue
				}
				if d != c.zero && w == 0 {
					t.Errorf("domain %q maps to the UNSPECIFIED wire value", c.stringOfD(d))
				}
				if back, ok := c.fromWire(w); !ok || back != d {
					t.Errorf("domain %q -> wire %s -> %q (ok %v)", c.stringOfD(d), vals.ByNumber(w).Name(), c.stringOfD(back), ok)
				}
			}
			if len(c.domain) != vals.Len() {
				t.Errorf("terms has %d values (unspecified included), %s declares %d", len(c.domain), c.desc.FullName(), vals.Len())
			}
		})
	}
}

// A number no .proto declares is refused, not mapped to something by accident.
func TestUndeclaredWireNumberIsRefused(t *testing.T) {
	for _, c := range cases() {
		if d, ok := c.fromWire(99); ok {
			t.Errorf("%s: wire number 99 mapped to %q", c.name, c.stringOfD(d))
		}
	}
}
