package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"strings"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"
	"google.golang.org/protobuf/proto"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service/wireterms"
)

// The figures of the reporting year set outside the register: official baselines and
// limits, authorised exemptions and HFC-23 by-product per facility, from one JSON file.

func init() {
	addVerb("year-figures", "store official baselines and limits, authorised exemptions and HFC-23 facility figures from a JSON file, or list them", yearFiguresUsage, defineYearFigures)
}

const yearFiguresUsage = `year-figures [flags] FILE.json
       year-figures --list [--year YEAR] [flags]

Stores the figures of the reporting year that do not come from the register:
  official_figures  a baseline as the Parties have set it, or a year's limit (e.g. of
                    an agreed plan); it takes precedence over the computed one, and
                    'halovet compliance' shows both
  exemptions        authorised exemptions (essential, critical, laboratory,
                    high-ambient-temperature uses) per Party, year and scope; a year's
                    limit is raised by them
  hfc23_entries     HFC-23 by-product per facility and year (generated, captured for
                    use, destroyed, emitted), reported beside Annex F consumption and
                    never part of it
Every official figure and exemption names its source (the decision or document).

FILE is one JSON object with any of the three arrays; field names as in the API
(snake_case); "use" and "kind" take the words below. Amounts are in the scope's
unit: ODP t for Annexes A to E, CO2-eq t for F (annex_group "F").
  {"official_figures": [{"figure_key": "XA-BASE-C/I", "kind": "baseline",
     "annex_group": "C/I", "amount": "12.5", "source": "Decision ..."}],
   "exemptions": [{"exemption_key": "XA-CUE-2026", "year": 2026,
     "annex_group": "E/I", "use": "critical", "amount": "1.2", "source": "Decision ..."}],
   "hfc23_entries": [{"entry_key": "PLANT-1-2026", "facility": "plant 1",
     "year": 2026, "generated_tonnes": "12", "captured_used_tonnes": "2",
     "destroyed_tonnes": "9", "emitted_tonnes": "1"}]}
use: essential, critical (E/I only), laboratory, high-ambient-temperature (F only);
kind: baseline (year 0) or limit (a year). country_code may be left out: the
reporting Party.

Each array is stored in one transaction, in the order above, every item or none;
a refused array stops the file there (the arrays before it stay stored). Keys
replace what is stored under them, so a corrected file can be sent again.

Examples:
  halovet year-figures figures-2026.json
  halovet year-figures --list --year 2026 --output json`

// yearFigureFile is the file's shape; each item is decoded by protojson.
type yearFigureFile struct {
	OfficialFigures []map[string]any `json:"official_figures"`
	Exemptions      []map[string]any `json:"exemptions"`
	HFC23Entries    []map[string]any `json:"hfc23_entries"`
}

var enumWords = map[string]map[string]string{
	"use":  {"essential": "EXEMPTED_USE_ESSENTIAL", "critical": "EXEMPTED_USE_CRITICAL", "laboratory": "EXEMPTED_USE_LABORATORY", "high-ambient-temperature": "EXEMPTED_USE_HIGH_AMBIENT_TEMPERATURE"},
	"kind": {"baseline": "OFFICIAL_FIGURE_KIND_BASELINE", "limit": "OFFICIAL_FIGURE_KIND_LIMIT"},
}

// decodeItems turns the file's items into messages made by newMsg; where names the array.
func decodeItems[M proto.Message](where string, items []map[string]any, newMsg func() M) ([]M, error) {
	out := make([]M, 0, len(items))
	for i, it := range items {
		for field, words := range enumWords {
			if s, ok := it[field].(string); ok {
				if name, ok := words[strings.ToLower(strings.TrimSpace(s))]; ok {
					it[field] = name
				}
			}
		}
		b, err := json.Marshal(it)
		if err != nil {
			return nil, err
		}
		m := newMsg()
		if err := wirejson.Unmarshal(b, m); err != nil {
			return nil, usageErr("%s[%d]: %v (see --help for the fields)", where, i, err)
		}
		out = append(out, m)
	}
	return out, nil
}

func defineYearFigures(fs *pflag.FlagSet) runFunc {
	var rf reportFlags
	rf.register(fs)
	list := fs.Bool("list", false, "list the stored figures instead of storing a file")
	year := fs.Int("year", 0, "with --list: only this year's exemptions and HFC-23 entries")
	return func(ctx context.Context, args []string) error {
		if *list {
			if err := rf.check(args); err != nil {
				return err
			}
		} else {
			if len(args) != 1 {
				return usageErr("give exactly one FILE.json, or --list (see --help)")
			}
			if err := rf.check(nil); err != nil {
				return err
			}
		}
		if rf.output == "csv" {
			return usageErr("--output csv: use text or json")
		}
		return rf.withConn(func(conn *grpc.ClientConn) error {
			if *list {
				return listYearFigures(ctx, conn, *year, rf.output, os.Stdout)
			}
			return storeYearFigures(ctx, conn, args[0], os.Stdout)
		})
	}
}

func storeYearFigures(ctx context.Context, conn *grpc.ClientConn, path string, w io.Writer) error {
	raw, err := os.ReadFile(path)
	if err != nil {
		return &exitError{code: 2, err: err}
	}
	var f yearFigureFile
	dec := json.NewDecoder(strings.NewReader(string(raw)))
	dec.DisallowUnknownFields()
	dec.UseNumber() // figures keep the decimal they are written as
	if err := dec.Decode(&f); err != nil {
		return usageErr("%s: %v; the file is one JSON object with the arrays official_figures, exemptions, hfc23_entries (see --help)", path, err)
	}
	if len(f.OfficialFigures)+len(f.Exemptions)+len(f.HFC23Entries) == 0 {
		return usageErr("%s holds no figures; give at least one of official_figures, exemptions, hfc23_entries", path)
	}
	off, err := decodeItems("official_figures", f.OfficialFigures, func() *halovetv1.OfficialFigure { return &halovetv1.OfficialFigure{} })
	if err != nil {
		return err
	}
	ex, err := decodeItems("exemptions", f.Exemptions, func() *halovetv1.AuthorisedExemption { return &halovetv1.AuthorisedExemption{} })
	if err != nil {
		return err
	}
	h23, err := decodeItems("hfc23_entries", f.HFC23Entries, func() *halovetv1.Hfc23Entry { return &halovetv1.Hfc23Entry{} })
	if err != nil {
		return err
	}
	c := halovetv1.NewConsumptionServiceClient(conn)
	if len(off) > 0 {
		if _, err := c.RecordOfficialFigures(ctx, &halovetv1.RecordOfficialFiguresRequest{Figures: off}); err != nil {
			return err
		}
		fmt.Fprintf(w, "stored %d official figures\n", len(off))
	}
	if len(ex) > 0 {
		if _, err := c.RecordExemptions(ctx, &halovetv1.RecordExemptionsRequest{Exemptions: ex}); err != nil {
			return err
		}
		fmt.Fprintf(w, "stored %d exemptions\n", len(ex))
	}
	if len(h23) > 0 {
		if _, err := c.RecordHfc23Entries(ctx, &halovetv1.RecordHfc23EntriesRequest{Entries: h23}); err != nil {
			return err
		}
		fmt.Fprintf(w, "stored %d HFC-23 facility entries\n", len(h23))
	}
	return nil
}

func listYearFigures(ctx context.Context, conn *grpc.ClientConn, year int, output string, w io.Writer) error {
	c := halovetv1.NewConsumptionServiceClient(conn)
	off, err := halovetv1.ReadAllPages(ctx, c.ListOfficialFigures, &halovetv1.ListOfficialFiguresRequest{PageSize: listPageSize}, "figures")
	if err != nil {
		return err
	}
	ex, err := halovetv1.ReadAllPages(ctx, c.ListExemptions, &halovetv1.ListExemptionsRequest{Year: int32(year), PageSize: listPageSize}, "exemptions")
	if err != nil {
		return err
	}
	h23, err := halovetv1.ReadAllPages(ctx, c.ListHfc23Entries, &halovetv1.ListHfc23EntriesRequest{Year: int32(year), PageSize: listPageSize}, "entries")
	if err != nil {
		return err
	}
	if output == "json" {
		return writeYearFiguresJSON(w, off, ex, h23)
	}
	tw := newTable(w)
	fmt.Fprintf(tw, "Official figures (%d)\n", len(off.GetFigures()))
	fmt.Fprintln(tw, "key\tParty\tkind\tgroup\tyear\tamount\tunit\tsource\t")
	for _, f := range off.GetFigures() {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%d\t%s\t%s\t%s\t\n", f.GetFigureKey(), f.GetCountryCode(), wirejson.EnumWord(f.GetKind().Descriptor(), f.GetKind().Number()),
			f.GetAnnexGroup(), f.GetYear(), showAmount(f.GetAmount(), f.GetUnit()), wireterms.ControlUnitText(f.GetUnit()), f.GetSource())
	}
	fmt.Fprintf(tw, "\nAuthorised exemptions (%d)\n", len(ex.GetExemptions()))
	fmt.Fprintln(tw, "key\tParty\tyear\tgroup\tuse\tamount\tunit\tsource\t")
	for _, e := range ex.GetExemptions() {
		fmt.Fprintf(tw, "%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s\t\n", e.GetExemptionKey(), e.GetCountryCode(), e.GetYear(), e.GetAnnexGroup(),
			wirejson.EnumWord(e.GetUse().Descriptor(), e.GetUse().Number()), showAmount(e.GetAmount(), e.GetUnit()), wireterms.ControlUnitText(e.GetUnit()), e.GetSource())
	}
	fmt.Fprintf(tw, "\nHFC-23 by-product per facility (%d)\n", len(h23.GetEntries()))
	fmt.Fprintln(tw, "key\tfacility\tyear\tgenerated t\tcaptured for use t\tdestroyed t\temitted t\temitted CO2-eq t\t")
	for _, e := range h23.GetEntries() {
		fmt.Fprintf(tw, "%s\t%s\t%d\t%s\t%s\t%s\t%s\t%s\t\n", e.GetEntryKey(), e.GetFacility(), e.GetYear(), showT(e.GetGeneratedTonnes()),
			showT(e.GetCapturedUsedTonnes()), showT(e.GetDestroyedTonnes()), showT(e.GetEmittedTonnes()), showCO2e(e.GetEmittedCo2ETonnes()))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err = io.WriteString(w, "\n"+reportFooter(nil))
	return err
}

// writeYearFiguresJSON writes the three lists as one document in the command line's JSON
// dialect, under the names the input file uses: {"official_figures": [...],
// "exemptions": [...], "hfc23_entries": [...]}.
func writeYearFiguresJSON(w io.Writer, off *halovetv1.ListOfficialFiguresResponse, ex *halovetv1.ListExemptionsResponse, h23 *halovetv1.ListHfc23EntriesResponse) error {
	var b bytes.Buffer
	b.WriteString("{\n")
	parts := []struct {
		name, field string
		m           proto.Message
	}{{"official_figures", "figures", off}, {"exemptions", "exemptions", ex}, {"hfc23_entries", "entries", h23}}
	for i, p := range parts {
		var one bytes.Buffer
		if err := wirejson.Doc(&one, p.m); err != nil {
			return err
		}
		var fields map[string]json.RawMessage
		if err := json.Unmarshal(one.Bytes(), &fields); err != nil {
			return fmt.Errorf("year figures: %w", err)
		}
		fmt.Fprintf(&b, "  %q: ", p.name)
		if err := json.Indent(&b, fields[p.field], "  ", "  "); err != nil {
			return fmt.Errorf("year figures: %w", err)
		}
		if i < len(parts)-1 {
			b.WriteByte(',')
		}
		b.WriteByte('\n')
	}
	b.WriteString("}\n")
	_, err := w.Write(b.Bytes())
	return err
}
