package validate

import (
	"bufio"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/halovet/halovet/exact"
	"github.com/halovet/halovet/substances"
	"github.com/halovet/halovet/terms"
)

// DecisionSupportNotice closes every text report.
const DecisionSupportNotice = "These results are decision support. The treaty text, national law, the national authority and licensed practice prevail."

// UnreadableVerdict is the verdict of a record with fields that could not be read (one
// field_unreadable finding each); such a record is answered without being sent.
func UnreadableVerdict(r *Record) Verdict {
	info, _ := LookupCode(CodeFieldUnreadable)
	v := Verdict{RecordKey: r.Key, Line: r.Line}
	for _, fi := range r.Unreadable {
		v.Findings = append(v.Findings, Finding{Code: CodeFieldUnreadable, Severity: info.Severity,
			Field: fi.Field, Message: fmt.Sprintf("%q: %s", fi.Text, fi.Reason)})
	}
	v.Add()
	return v
}

// LineErrorVerdict turns a line a reader could not read into a rejected verdict with one
// LINE_UNREADABLE finding, so reports and summaries account for every line.
func LineErrorVerdict(le *LineError) Verdict {
	f := newFinding(CodeLineUnreadable, "", le.Reason)
	return Verdict{Line: le.Line, Outcome: OutcomeRejected, Findings: []Finding{f}}
}

// ReportWriter writes verdicts one at a time; Close flushes.
type ReportWriter interface {
	Write(v *Verdict) error
	Close() error
}

// reportColumns are the columns of the CSV report.
var reportColumns = []string{"source_line", "record_key", "outcome", "resolved_designation", "kind",
	"net_mass_kg", "odp_tonnes", "co2e_tonnes", "counts_in_consumption", "errors", "warnings", "notices",
	"codes", "findings"}

// CSVReport writes one CSV row per verdict: source_line, record_key, outcome,
// resolved_designation, kind, net_mass_kg, odp_tonnes, co2e_tonnes, counts_in_consumption, the
// number of errors, warnings and notices, the codes (";"-separated) and the findings
// (" | "-separated, each "severity CODE (field): message"). Text cells that a spreadsheet
// would run as a formula (starting with =, +, -, @) are prefixed with an apostrophe.
type CSVReport struct {
	w   *csv.Writer
	row []string
}

// NewCSVReport writes the header row.
func NewCSVReport(w io.Writer) (*CSVReport, error) {
	r := &CSVReport{w: csv.NewWriter(w), row: make([]string, len(reportColumns))}
	if err := r.w.Write(reportColumns); err != nil {
		return nil, fmt.Errorf("writing CSV report header: %w", err)
	}
	return r, nil
}

// Write implements ReportWriter.
func (r *CSVReport) Write(v *Verdict) error {
	var ne, nw, nn int
	codes := make([]string, 0, len(v.Findings))
	texts := make([]string, 0, len(v.Findings))
	for _, f := range v.Findings {
		switch f.Severity {
		case SeverityError:
			ne++
		case SeverityWarning:
			nw++
		default:
			nn++
		}
		codes = append(codes, f.Code)
		texts = append(texts, f.String())
	}
	row := r.row
	row[0] = strconv.FormatInt(v.Line, 10)
	row[1] = cellText(v.RecordKey)
	row[2] = v.Outcome.String()
	row[3], row[4], row[5], row[6], row[7], row[8] = "", "", "", "", "", ""
	if v.Resolved {
		row[3] = cellText(v.Figures.Designation)
		row[4] = kindName(v.Figures.Kind)
		x := v.Figures.Exacts()
		row[5] = x.NetMassKg.String()
		row[6] = x.ODPTonnes.String()
		row[7] = x.CO2eTonnes.String()
		row[8] = strconv.FormatBool(v.Figures.CountsInConsumption)
	}
	row[9], row[10], row[11] = strconv.Itoa(ne), strconv.Itoa(nw), strconv.Itoa(nn)
	row[12] = strings.Join(codes, ";")
	row[13] = cellText(strings.Join(texts, " | "))
	if err := r.w.Write(row); err != nil {
		return fmt.Errorf("writing CSV report row for line %d: %w", v.Line, err)
	}
	return nil
}

// Close implements ReportWriter.
func (r *CSVReport) Close() error {
	r.w.Flush()
	if err := r.w.Error(); err != nil {
		return fmt.Errorf("writing CSV report: %w", err)
	}
	return nil
}

func cellText(s string) string {
	if s != "" && strings.ContainsRune("=+-@\t\r", rune(s[0])) {
		return "'" + s
	}
	return s
}

func kindName(k substances.Kind) string {
	switch k {
	case substances.KindSubstance:
		return "substance"
	case substances.KindBlend:
		return "blend"
	}
	return ""
}

// JSONLReport writes one JSON object per verdict per line (JSON Lines), so a report streams
// and can be read back line by line like the input. Keys are snake_case as in the wire
// message halovet.v1.Verdict, with enums as lower-case words.
type JSONLReport struct {
	bw  *bufio.Writer
	enc *json.Encoder
}

// NewJSONLReport returns a writer; nothing is written before the first verdict.
func NewJSONLReport(w io.Writer) *JSONLReport {
	bw := bufio.NewWriter(w)
	enc := json.NewEncoder(bw)
	enc.SetEscapeHTML(false)
	return &JSONLReport{bw: bw, enc: enc}
}

type jsonFinding struct {
	Code     string `json:"code"`
	Severity string `json:"severity"`
	Field    string `json:"field"`
	Message  string `json:"message"`
}

// The figures are exact decimal strings, as on the wire (DEVELOPERS.md, "Figures on the
// wire"); a draw's amount is in the store's billionths.
type jsonComponent struct {
	Designation string `json:"designation"`
	AnnexGroup  string `json:"annex_group"`
	MassPercent string `json:"mass_percent"`
	MassKg      string `json:"mass_kg"`
	ODPTonnes   string `json:"odp_tonnes"`
	CO2eTonnes  string `json:"co2e_tonnes"`
}

type jsonFigures struct {
	ResolvedDesignation string `json:"resolved_designation"`
	Kind                string `json:"kind"`
	NetMassKg           string `json:"net_mass_kg"`
	ODPTonnes           string `json:"odp_tonnes"`
	CO2eTonnes          string `json:"co2e_tonnes"`
	CountsInConsumption bool   `json:"counts_in_consumption"`
	PartnerNonParty     bool   `json:"partner_non_party"`
	// PartnerNotBoundGroups: the groups the partner is not bound for (omitted when none).
	PartnerNotBoundGroups []string        `json:"partner_not_bound_groups,omitempty"`
	SafetyClass           string          `json:"safety_class"`
	Components            []jsonComponent `json:"components"`
}

type jsonDraw struct {
	LicenceNumber string `json:"licence_number"`
	LineNumber    int    `json:"line_number"`
	Unit          string `json:"unit"`
	Amount        string `json:"amount"`
}

type jsonVerdict struct {
	SourceLine  int64         `json:"source_line"`
	RecordKey   string        `json:"record_key"`
	Outcome     string        `json:"outcome"`
	Findings    []jsonFinding `json:"findings"`
	Figures     *jsonFigures  `json:"figures,omitempty"`
	Draws       []jsonDraw    `json:"draws,omitempty"`
	Replayed    bool          `json:"replayed"`
	Fingerprint string        `json:"fingerprint,omitempty"`
}

// Write implements ReportWriter.
func (r *JSONLReport) Write(v *Verdict) error {
	jv := jsonVerdict{SourceLine: v.Line, RecordKey: v.RecordKey, Outcome: v.Outcome.String(),
		Findings: make([]jsonFinding, len(v.Findings)), Replayed: v.Replayed, Fingerprint: v.Fingerprint}
	for i, f := range v.Findings {
		jv.Findings[i] = jsonFinding{f.Code, f.Severity.String(), f.Field, f.Message}
	}
	if v.Resolved {
		x := v.Figures.Exacts()
		fg := &jsonFigures{ResolvedDesignation: v.Figures.Designation, Kind: kindName(v.Figures.Kind),
			NetMassKg: x.NetMassKg.String(), ODPTonnes: x.ODPTonnes.String(), CO2eTonnes: x.CO2eTonnes.String(),
			CountsInConsumption: v.Figures.CountsInConsumption, PartnerNonParty: v.Figures.PartnerNonParty,
			SafetyClass: v.Figures.SafetyClass, Components: make([]jsonComponent, len(v.Figures.Components))}
		for _, g := range v.Figures.PartnerNotBoundGroups {
			fg.PartnerNotBoundGroups = append(fg.PartnerNotBoundGroups, string(g))
		}
		for i, c := range v.Figures.Components {
			var cx substances.ComponentExact
			if i < len(x.Components) {
				cx = x.Components[i]
			}
			fg.Components[i] = jsonComponent{c.Designation, string(c.Group), cx.MassPct.String(), cx.MassKg.String(), cx.ODPTonnes.String(), cx.CO2eTonnes.String()}
		}
		jv.Figures = fg
	}
	for _, d := range v.Draws {
		jv.Draws = append(jv.Draws, jsonDraw{d.LicenceNumber, d.LineNumber, d.Unit.Symbol(), fmtAmount(d.Amount)})
	}
	if err := r.enc.Encode(&jv); err != nil {
		return fmt.Errorf("writing JSON report line for line %d: %w", v.Line, err)
	}
	return nil
}

// Close implements ReportWriter.
func (r *JSONLReport) Close() error {
	if err := r.bw.Flush(); err != nil {
		return fmt.Errorf("writing JSON report: %w", err)
	}
	return nil
}

// Totals sum the figures of accepted records, exactly (from Figures.Exacts).
type Totals struct {
	Records    int64
	NetMassKg  exact.Decimal
	ODPTonnes  exact.Decimal
	CO2eTonnes exact.Decimal
}

// Summary counts the verdicts of a batch.
type Summary struct {
	Records              int64
	Accepted             int64
	AcceptedWithWarnings int64
	Rejected             int64
	Replayed             int64
	ByCode               map[string]int64            // findings per code
	ByDirection          map[terms.Direction]*Totals // accepted, not replayed records
	cautions             []string                    // unique caution texts, first seen first
	cautionEntries       map[string][]string         // caution text -> designations
}

// NewSummary returns an empty summary.
func NewSummary() *Summary {
	return &Summary{ByCode: map[string]int64{}, ByDirection: map[terms.Direction]*Totals{}, cautionEntries: map[string][]string{}}
}

// Add counts one verdict. direction is the record's direction (a Verdict does not carry it);
// pass DirectionUnspecified for unreadable lines.
func (s *Summary) Add(v *Verdict, direction terms.Direction) {
	s.Records++
	switch v.Outcome {
	case OutcomeAccepted:
		s.Accepted++
	case OutcomeAcceptedWithWarnings:
		s.AcceptedWithWarnings++
	default:
		s.Rejected++
	}
	if v.Replayed {
		s.Replayed++
	}
	for _, f := range v.Findings {
		s.ByCode[f.Code]++
	}
	if v.Resolved && v.Outcome != OutcomeRejected && !v.Replayed {
		t := s.ByDirection[direction]
		if t == nil {
			t = &Totals{}
			s.ByDirection[direction] = t
		}
		x := v.Figures.Exacts()
		t.Records++
		t.NetMassKg = t.NetMassKg.Add(x.NetMassKg)
		t.ODPTonnes = t.ODPTonnes.Add(x.ODPTonnes)
		t.CO2eTonnes = t.CO2eTonnes.Add(x.CO2eTonnes)
	}
	if v.Resolved {
		for _, c := range v.Figures.Cautions {
			names, seen := s.cautionEntries[c]
			if !seen {
				s.cautions = append(s.cautions, c)
			}
			if !slices.Contains(names, v.Figures.Designation) {
				s.cautionEntries[c] = append(names, v.Figures.Designation)
			}
		}
	}
}

// CountsBySeverity splits ByCode into errors, warnings and notices per code (the wire
// summary's errors_by_code and warnings_by_code).
func (s *Summary) CountsBySeverity(sev Severity) map[string]int64 {
	out := map[string]int64{}
	for code, n := range s.ByCode {
		if info, ok := LookupCode(code); ok && info.Severity == sev {
			out[code] = n
		}
	}
	return out
}

// Cautions returns the safety cautions that occurred in the batch, each with the entries it
// applies to, in the order first seen.
func (s *Summary) Cautions() []CautionNote {
	out := make([]CautionNote, 0, len(s.cautions))
	for _, c := range s.cautions {
		out = append(out, CautionNote{Text: c, Designations: slices.Clone(s.cautionEntries[c])})
	}
	return out
}

// CautionNote is one safety caution with the entries of the batch it applies to.
type CautionNote struct {
	Text         string
	Designations []string
}

// WriteText renders the summary as text tables, ending with the safety cautions of the
// batch's substances and the decision-support notice.
func (s *Summary) WriteText(w io.Writer) error {
	tw := tabwriter.NewWriter(w, 0, 4, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintf(tw, "Records\t%d\t\n", s.Records)
	fmt.Fprintf(tw, "accepted\t%d\t\n", s.Accepted)
	fmt.Fprintf(tw, "accepted with warnings\t%d\t\n", s.AcceptedWithWarnings)
	if s.Replayed > 0 {
		// Replays are accepted records recorded before: they belong with the accepted ones.
		fmt.Fprintf(tw, "  of all accepted, replays\t%d\t\n", s.Replayed)
	}
	fmt.Fprintf(tw, "rejected\t%d\t\n", s.Rejected)
	if err := tw.Flush(); err != nil {
		return err
	}
	if len(s.ByDirection) > 0 {
		fmt.Fprintln(w, "\nAccepted shipments")
		tw = tabwriter.NewWriter(w, 0, 4, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintf(tw, "direction\trecords\tnet mass kg\tODP t\tCO2-eq t\t\n")
		for d := terms.DirectionUnspecified; d <= terms.DirectionTransit; d++ {
			t := s.ByDirection[d]
			if t == nil {
				continue
			}
			name := d.String()
			if name == "" {
				name = "(none)"
			}
			// Rounded for display only, to the places of exact.Units, written fixed so that
			// the columns align.
			fmt.Fprintf(tw, "%s\t%d\t%s\t%s\t%s\t\n", name, t.Records, t.NetMassKg.Fixed(exact.Kg.Spec().Places),
				t.ODPTonnes.Fixed(exact.ODPTonnes.Spec().Places), t.CO2eTonnes.Fixed(exact.CO2eTonnes.Spec().Places))
		}
		if err := tw.Flush(); err != nil {
			return err
		}
	}
	if len(s.ByCode) > 0 {
		fmt.Fprintln(w, "\nFindings by code")
		codes := make([]string, 0, len(s.ByCode))
		for c := range s.ByCode {
			codes = append(codes, c)
		}
		slices.SortFunc(codes, func(a, b string) int {
			sa, sb := severityOf(a), severityOf(b)
			if sa != sb {
				return int(sb) - int(sa)
			}
			return strings.Compare(a, b)
		})
		tw = tabwriter.NewWriter(w, 0, 4, 2, ' ', 0)
		fmt.Fprintf(tw, "code\tseverity\tcount\n")
		for _, c := range codes {
			fmt.Fprintf(tw, "%s\t%s\t%d\n", c, severityOf(c), s.ByCode[c])
		}
		if err := tw.Flush(); err != nil {
			return err
		}
	}
	if notes := s.Cautions(); len(notes) > 0 {
		fmt.Fprintln(w, "\nSafety cautions for the substances in this batch")
		for _, n := range notes {
			if strings.Contains(n.Text, "decision support") {
				continue // said once below
			}
			fmt.Fprintf(w, "- %s\n  applies to: %s\n", n.Text, nameList(n.Designations, 12))
		}
	}
	_, err := fmt.Fprintf(w, "\n%s\n", DecisionSupportNotice)
	return err
}

func severityOf(code string) Severity {
	if info, ok := LookupCode(code); ok {
		return info.Severity
	}
	return SeverityUnspecified
}

func nameList(names []string, max int) string {
	if len(names) <= max {
		return strings.Join(names, ", ")
	}
	return strings.Join(names[:max], ", ") + fmt.Sprintf(" and %d more", len(names)-max)
}
