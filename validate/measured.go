package validate

import (
	"errors"
	"fmt"
	"strings"

	"github.com/halovet/halovet/substances"
)

// MeasuredShare is one component of a measured composition: what a refrigerant analyser or a
// laboratory found in the cylinder. Air and other non-condensables are given under the
// identifier "air" (or "non-condensables", "NCG").
type MeasuredShare struct {
	Identifier  string  // any identifier that resolves to exactly one substance, or "air"
	MassPct     float64 // mass percent as read
	Uncertainty float64 // ± mass % points; 0 when the instrument states none
}

// ParseMeasured reads a measured composition written as "HCFC-22=95±0.5;air=5": identifier,
// "=", mass percent, an optional "±" (or "+-") and uncertainty in mass % points; shares
// separated by ";".
func ParseMeasured(s string) ([]MeasuredShare, error) {
	s = strings.TrimSpace(s)
	if s == "" {
		return nil, nil
	}
	var out []MeasuredShare
	for part := range strings.SplitSeq(s, ";") {
		part = strings.TrimSpace(part)
		if part == "" {
			continue
		}
		i := strings.LastIndexByte(part, '=')
		if i < 0 {
			return nil, fmt.Errorf("share %q has no \"=\"; write identifier=percent or identifier=percent±uncertainty separated by \";\", e.g. HCFC-22=95±0.5;air=5", cutText(part))
		}
		id := strings.TrimSpace(part[:i])
		if id == "" {
			return nil, fmt.Errorf("share %q has no identifier before \"=\"", cutText(part))
		}
		num, unc, hasUnc := strings.Cut(part[i+1:], "±")
		if !hasUnc {
			num, unc, hasUnc = strings.Cut(part[i+1:], "+-")
		}
		pct, err := ParseDecimal(strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(num), "%")))
		if err != nil {
			return nil, fmt.Errorf("share %q: mass percent: %w", cutText(part), err)
		}
		m := MeasuredShare{Identifier: id, MassPct: pct.Float64()}
		if hasUnc {
			u, err := ParseDecimal(strings.TrimSpace(strings.TrimSuffix(strings.TrimSpace(unc), "%")))
			if err != nil {
				return nil, fmt.Errorf("share %q: uncertainty: %w", cutText(part), err)
			}
			m.Uncertainty = u.Float64()
		}
		out = append(out, m)
	}
	return out, nil
}

// FormatMeasured writes a measured composition in the form ParseMeasured reads.
func FormatMeasured(shares []MeasuredShare) string {
	var b strings.Builder
	for i, s := range shares {
		if i > 0 {
			b.WriteByte(';')
		}
		fmt.Fprintf(&b, "%s=%g", s.Identifier, s.MassPct)
		if s.Uncertainty != 0 {
			fmt.Fprintf(&b, "±%g", s.Uncertainty)
		}
	}
	return b.String()
}

// ToReading converts a measured composition for substances.Catalogue.Analyse.
func ToReading(shares []MeasuredShare) substances.Reading {
	r := substances.Reading{Components: make([]substances.MeasuredShare, len(shares))}
	for i, s := range shares {
		r.Components[i] = substances.MeasuredShare{Identifier: s.Identifier, MassPct: s.MassPct, Uncertainty: s.Uncertainty}
	}
	return r
}

// measurementRules compares a measured composition with the declared substance or blend.
func (c *checker) measurementRules() *substances.Analysis {
	if len(c.r.Measured) == 0 {
		return nil
	}
	mass := 0.0
	if c.qtyOK {
		mass = c.netKg
	}
	declared := ""
	if !c.adHoc {
		declared = c.designation
	}
	a, err := c.env.Catalogue.Analyse(ToReading(c.r.Measured), substances.AnalysisOptions{Declared: declared, NetMassKg: mass})
	if err != nil {
		c.add(CodeMeasuredUnreadable, "", "measured_composition: %s", measuredError(err))
		return nil
	}
	if a.NonCondensableNote != "" {
		c.add(CodeMeasuredNonCondensables, "", "%s", a.NonCondensableNote)
	}
	if a.Declared == nil {
		c.add(CodeMeasuredNotCompared, "", "no catalogue substance or blend is declared, so the reading was not compared with a declaration: %s", a.Summary)
		return &a
	}
	if a.DeclaredFits {
		c.add(CodeMeasuredConfirms, "", "the measured composition lies within the tolerance of the declared %s, widened by the reading's uncertainty: %s", declared, a.Summary)
	} else {
		c.add(CodeMeasuredContradicts, "", "the measured composition does not fit the declared %s: %s%s", declared, a.Summary, outsideList(a.Declared))
	}
	for _, h := range a.Hidden {
		msg := fmt.Sprintf("the reading shows %s, %s, at %s %% of the refrigerant; the declared %s does not contain it. At the declared net mass (%s kg) it would draw %s ODP t",
			h.Designation, groupLabel(h.Group), trimFloat(round6(h.MassPct)), declared, trimFloat(round6(mass)), trimFloat(round6(h.ODPTonnes)))
		if substances.GroupFI == h.Group || substances.GroupFII == h.Group {
			msg += fmt.Sprintf(" and %s CO2-eq t", trimFloat(round6(h.CO2eTonnes)))
		} else if h.ProtocolGWP > 0 {
			msg += fmt.Sprintf(" (its Annex-listed GWP of %s would make %s t CO2-eq, but the Protocol counts it in ODP tonnes)", trimFloat(h.ProtocolGWP), trimFloat(round6(h.ListedGWPTonnes)))
		}
		c.add(CodeMeasuredHiddenControlled, "", "%s", msg)
	}
	return &a
}

// outsideList names the components of the declared entry outside their bands.
func outsideList(m *substances.Match) string {
	var parts []string
	for _, f := range m.Components {
		if f.Excess > 0 {
			parts = append(parts, fmt.Sprintf("%s measured %s %%, allowed %s to %s %%", f.Designation,
				trimFloat(round6(f.MeasuredPct)), trimFloat(round6(max(f.Low, 0))), trimFloat(round6(f.High))))
		}
	}
	if len(parts) == 0 {
		return ""
	}
	return " (" + strings.Join(parts, "; ") + ")"
}

func round6(v float64) float64 {
	s, _ := ParseDecimal(fmt.Sprintf("%.6f", v))
	return s.Float64()
}

// measuredError writes an Analyse error with the field named as in the batch formats.
func measuredError(err error) string {
	var ie *substances.InputError
	var ide *substances.IdentifierError
	switch {
	case errors.As(err, &ie):
		return shareField(ie.Field) + ": " + ie.Reason
	case errors.As(err, &ide):
		field := ide.Field
		ide2 := *ide
		ide2.Field = shareField(field)
		return ide2.Error()
	}
	return err.Error()
}

// shareField turns "components[2].mass_pct" into "share 3 mass percent".
func shareField(f string) string {
	var n int
	var rest string
	if _, err := fmt.Sscanf(f, "components[%d]", &n); err == nil {
		if i := strings.IndexByte(f, '.'); i >= 0 {
			rest = f[i+1:]
		}
		what := map[string]string{"identifier": "identifier", "mass_percent": "mass percent", "uncertainty_points": "uncertainty"}[rest]
		return strings.TrimSpace(fmt.Sprintf("share %d %s", n+1, what))
	}
	if f == "components" {
		return "shares"
	}
	return f
}
