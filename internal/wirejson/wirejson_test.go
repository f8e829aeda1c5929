package wirejson

import (
	"bytes"
	"math"
	"strings"
	"testing"

	"google.golang.org/protobuf/proto"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// yearReport is an invented report: Party XA, one group with data and one without.
func yearReport() *halovetv1.GetYearReportResponse {
	return &halovetv1.GetYearReportResponse{
		CountryCode: "XA",
		Year:        2025,
		Groups: []*halovetv1.YearGroupTotal{
			{AnnexGroup: "C/I", HasData: true, ImportTonnes: "69", ConsumptionTonnes: "69", ConsumptionOdpTonnes: "4.29"},
			{AnnexGroup: "A/I"},
		},
		NoDataGroups: []string{"A/I"},
		State:        halovetv1.ReportState_REPORT_STATE_PROVISIONAL,
	}
}

// The dialect's rules (doc.go), each visible in the bytes: snake_case keys in .proto
// order, every field present with its zero, enums as words, two-space indent.
const yearReportDoc = `{
  "country_code": "XA",
  "year": 2025,
  "groups": [
    {
      "annex_group": "C/I",
      "has_data": true,
      "production_tonnes": "",
      "import_tonnes": "69",
      "export_tonnes": "",
      "destruction_tonnes": "",
      "feedstock_tonnes": "",
      "qps_tonnes": "",
      "export_non_party_tonnes": "",
      "consumption_tonnes": "69",
      "consumption_odp_tonnes": "4.29",
      "consumption_co2e_tonnes": ""
    },
    {
      "annex_group": "A/I",
      "has_data": false,
      "production_tonnes": "",
      "import_tonnes": "",
      "export_tonnes": "",
      "destruction_tonnes": "",
      "feedstock_tonnes": "",
      "qps_tonnes": "",
      "export_non_party_tonnes": "",
      "consumption_tonnes": "",
      "consumption_odp_tonnes": "",
      "consumption_co2e_tonnes": ""
    }
  ],
  "imports": [],
  "exports": [],
  "production": [],
  "destruction": [],
  "feedstock": [],
  "qps": [],
  "imports_non_party": [],
  "exports_non_party": [],
  "hfc23": [],
  "no_data_groups": [
    "A/I"
  ],
  "notes": [],
  "state": "provisional",
  "exemptions": []
}
`

func TestDoc(t *testing.T) {
	var b bytes.Buffer
	if err := Doc(&b, yearReport()); err != nil {
		t.Fatal(err)
	}
	if b.String() != yearReportDoc {
		t.Errorf("Doc:\n%s\nwant:\n%s", b.String(), yearReportDoc)
	}
}

// TestLine: one line, map entries sorted by key, zeros and empty maps kept. The finding
// codes are invented.
func TestLine(t *testing.T) {
	s := &halovetv1.BatchSummary{Records: 3, Accepted: 1, Rejected: 2,
		ErrorsByCode: map[string]int64{"code-b": 2, "code-a": 1}}
	const want = `{"records":3,"accepted":1,"accepted_with_warnings":0,"rejected":2,"recorded":0,"replayed":0,` +
		`"errors_by_code":{"code-a":1,"code-b":2},"warnings_by_code":{}}`
	if got := string(Line(s)); got != want {
		t.Errorf("Line:\n%s\nwant:\n%s", got, want)
	}
}

func TestEnumWord(t *testing.T) {
	for _, c := range []struct {
		name string
		got  string
		want string
	}{
		{"report state", EnumWord(halovetv1.ReportState_REPORT_STATE_PROVISIONAL.Descriptor(), 1), "provisional"},
		{"underscores become hyphens", EnumWord(halovetv1.QuotaUnit(0).Descriptor(), halovetv1.QuotaUnit_QUOTA_UNIT_CO2E_TONNES.Number()), "co2e-tonnes"},
		{"the zero value", EnumWord(halovetv1.ReportState(0).Descriptor(), 0), "unspecified"},
		{"a number the descriptor does not know", EnumWord(halovetv1.ReportState(0).Descriptor(), 99), "99"},
	} {
		if c.got != c.want {
			t.Errorf("%s: %q, want %q", c.name, c.got, c.want)
		}
	}
}

// TestDecimalText: binary floating-point noise is rounded away at 12 significant digits
// (common practice: a double holds 15 to 17).
func TestDecimalText(t *testing.T) {
	for _, c := range []struct {
		in   float64
		want string
	}{
		{0.8999999999999986, "0.9"},
		{10.860506999999998, "10.860507"},
		{0.1 + 0.2, "0.3"},
		{math.Copysign(0, -1), "0"},
		{-2.5, "-2.5"},
		{1e21, "1000000000000000000000"},
		{123456789012345, "123456789012000"},
	} {
		if got := decimalText(c.in); got != c.want {
			t.Errorf("decimalText(%v) = %q, want %q", c.in, got, c.want)
		}
	}
}

// TestUnmarshal reads the dialect back to the same message, and reads protobuf JSON
// (lowerCamel keys, enum names) as well.
func TestUnmarshal(t *testing.T) {
	var got halovetv1.GetYearReportResponse
	if err := Unmarshal([]byte(yearReportDoc), &got); err != nil {
		t.Fatal(err)
	}
	if !proto.Equal(&got, yearReport()) {
		t.Errorf("Unmarshal(Doc(m)) = %v, want %v", &got, yearReport())
	}
	var pj halovetv1.GetYearReportResponse
	if err := Unmarshal([]byte(`{"countryCode":"XA","year":2025,"state":"REPORT_STATE_CLOSED"}`), &pj); err != nil {
		t.Fatal(err)
	}
	if pj.GetCountryCode() != "XA" || pj.GetState() != halovetv1.ReportState_REPORT_STATE_CLOSED {
		t.Errorf("protobuf JSON read as %v", &pj)
	}
	if err := Unmarshal([]byte(`{"state":"half-open"}`), &pj); err == nil || !strings.Contains(err.Error(), "state") {
		t.Errorf("an unknown enum word: %v, want an error naming the field", err)
	}
}
