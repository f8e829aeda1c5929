package substances

import (
	"errors"
	"strings"
	"testing"

	"github.com/halovet/halovet/terms"
)

// The Parse functions read the stored word, the wire enum name and the spellings people
// write; anything else is refused naming what is accepted. Expected values: the catalogue's
// own words (seed files, annex.csv columns gwp_mp…gwp_ar6; blends.csv column type).
func TestParseCatalogueWords(t *testing.T) {
	for _, tc := range []struct {
		in   string
		got  func(string) (string, error)
		want string
	}{
		{"MP", parseAs(ParseGWPSet), "MP"},
		{"GWP_SET_PROTOCOL_ANNEXES", parseAs(ParseGWPSet), "MP"},
		{"protocol", parseAs(ParseGWPSet), "MP"},
		{"ar5", parseAs(ParseGWPSet), "AR5"},
		{"IPCC AR6", parseAs(ParseGWPSet), "AR6"},
		{"GWP_SET_IPCC_AR4", parseAs(ParseGWPSet), "AR4"},
		{"GWP_SET_UNSPECIFIED", parseAs(ParseGWPSet), ""},
		{"", parseAs(ParseGWPSet), ""},
		{"annex-f-only", parseAs(ParseGWPConvention), "annex-f-only"},
		{"GWP_CONVENTION_ALL_COMPONENTS", parseAs(ParseGWPConvention), "all-components"},
		{"HS 2022", parseAs(ParseHSEdition), "HS2022"},
		{"2017", parseAs(ParseHSEdition), "HS2017"},
		{"HS_EDITION_HS_2022", parseAs(ParseHSEdition), "HS2022"},
		{"Zeotropic", parseAs(ParseBlendType), "zeotrope"},
		{"BLEND_TYPE_MIXTURE", parseAs(ParseBlendType), "mixture"},
	} {
		got, err := tc.got(tc.in)
		if err != nil || got != tc.want {
			t.Errorf("parse %q = %q, %v; want %q", tc.in, got, err, tc.want)
		}
	}
	for _, tc := range []struct {
		in     string
		parse  func(string) (string, error)
		listed string
	}{
		{"AR3", parseAs(ParseGWPSet), "MP, AR4, AR5, AR6"},
		{"GWP_SET_IPCC_AR9", parseAs(ParseGWPSet), "AR6"},
		{"HS2012", parseAs(ParseHSEdition), "HS2017, HS2022"},
		{"all components!", parseAs(ParseGWPConvention), "all-components, annex-f-only"},
		{"near-azeotrope", parseAs(ParseBlendType), "zeotrope, azeotrope, mixture"},
	} {
		_, err := tc.parse(tc.in)
		if !errors.Is(err, terms.ErrUnknownValue) || !strings.Contains(err.Error(), tc.listed) {
			t.Errorf("parse %q: error %v; want ErrUnknownValue listing %s", tc.in, err, tc.listed)
		}
	}
}

func parseAs[T ~string](f func(string) (T, error)) func(string) (string, error) {
	return func(s string) (string, error) { v, err := f(s); return string(v), err }
}
