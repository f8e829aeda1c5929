package wireterms

import (
	"testing"

	"google.golang.org/protobuf/reflect/protoreflect"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Every specified value of the consumption enums has a word of its own, so that a value
// added to the .proto fails here until it is given one.
func TestConsumptionEnumWords(t *testing.T) {
	for _, c := range []struct {
		enum protoreflect.EnumDescriptor
		word func(protoreflect.EnumNumber) string
		none string
	}{
		{halovetv1.ControlUnit(0).Descriptor(), func(n protoreflect.EnumNumber) string { return ControlUnitText(halovetv1.ControlUnit(n)) }, ""},
		{halovetv1.ControlSchedule(0).Descriptor(), func(n protoreflect.EnumNumber) string { return ControlScheduleText(halovetv1.ControlSchedule(n)) }, "unknown"},
		{halovetv1.ReportState(0).Descriptor(), func(n protoreflect.EnumNumber) string { return ReportStateText(halovetv1.ReportState(n)) }, "REPORT_STATE_UNSPECIFIED"},
	} {
		seen := map[string]protoreflect.Name{}
		vs := c.enum.Values()
		for i := range vs.Len() {
			v := vs.Get(i)
			w := c.word(v.Number())
			if v.Number() == 0 {
				if w != c.none {
					t.Errorf("%s: %q; want %q", v.Name(), w, c.none)
				}
				continue
			}
			if w == "" || w == c.none || w == string(v.Name()) {
				t.Errorf("%s has no word of its own (%q)", v.Name(), w)
			}
			if prev, dup := seen[w]; dup {
				t.Errorf("%s and %s both read %q", prev, v.Name(), w)
			}
			seen[w] = v.Name()
		}
	}
}
