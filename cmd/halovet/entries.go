package main

import (
	"context"
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"regexp"
	"strconv"
	"strings"

	"github.com/spf13/pflag"
	"google.golang.org/genproto/googleapis/rpc/errdetails"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"
	"google.golang.org/protobuf/proto"

	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

func init() {
	addVerb("entries", "import national entries (production, destruction, feedstock, QPS, historical totals) from CSV, or list them", entriesUsage, defineEntries)
}

const entriesUsage = `entries [flags] FILE.csv
       entries --list [--year YEAR] [flags]

Imports national entries: the quantities that do not pass customs as shipments
(production, destruction by an approved technology, feedstock use, QPS use of methyl
bromide) and, for years before halovet was in use, historical import and export
totals per substance and year, e.g. the base years of a baseline. An entry whose key
is stored already is replaced, so a corrected file can be imported again.

FILE is CSV with a header row naming these columns, in any order (* = required):
  * entry_key      your own key for the entry, unique (e.g. PROD-2025-HCFC-22)
  * year           calendar year, 1986 or later
  * entry_type     production, destruction, feedstock, qps, historical-import,
                   historical-export, historical-export-non-party
  * substance      a single substance: designation or synonym (HCFC-22, R-22,
                   methyl bromide); a blend must be split into its components
  * metric_tonnes  metric tonnes of substance, 0 or more, with a decimal point
    note           free text: facility, source document
    outside_customs  yes or no (default no), for feedstock, qps and destruction:
                   yes = only quantities that never passed customs (domestic
                   production used as feedstock, stocks destroyed); no = the whole
                   year's use, accepted only for a year without shipments declared
                   for that use

One source per quantity: imports declared for feedstock, QPS or destruction are
deducted through their declared purpose already. Enter a feedstock, qps or
destruction line only for what never passed customs, and mark it outside_customs;
a line that would deduct the same use of the same substance and year again is
refused by the server, naming the line.

Lines starting with # and blank lines are skipped.

All or nothing: every line is checked first, and when any line is wrong each problem
is printed with its line number and nothing is stored. The server checks the lines
again (substances against its catalogue) and stores them in one transaction, up to
10000 lines per transaction; a longer file is sent in parts of 10000 lines.

--list prints the stored entries (of --year only, when given) instead.

Examples:
  halovet entries base-years.csv
  halovet entries --output csv --list --year 2010 > entries-2010.csv`

// entryColumns are the CSV columns; the first five are required.
var entryColumns = []string{"entry_key", "year", "entry_type", "substance", "metric_tonnes", "note", "outside_customs"}

// entryTypeWords are the entry_type words of the file.
var entryTypeWords = map[string]halovetv1.EntryType{
	"production":                  halovetv1.EntryType_ENTRY_TYPE_PRODUCTION,
	"destruction":                 halovetv1.EntryType_ENTRY_TYPE_DESTRUCTION,
	"feedstock":                   halovetv1.EntryType_ENTRY_TYPE_FEEDSTOCK,
	"qps":                         halovetv1.EntryType_ENTRY_TYPE_QPS,
	"historical-import":           halovetv1.EntryType_ENTRY_TYPE_HISTORICAL_IMPORT,
	"historical-export":           halovetv1.EntryType_ENTRY_TYPE_HISTORICAL_EXPORT,
	"historical-export-non-party": halovetv1.EntryType_ENTRY_TYPE_HISTORICAL_EXPORT_NON_PARTY,
}

// entryTypeWord is the file's word for an entry type.
func entryTypeWord(t halovetv1.EntryType) string {
	for w, x := range entryTypeWords {
		if x == t {
			return w
		}
	}
	return strings.ToLower(t.String())
}

// parseEntryType reads an entry_type case-insensitively; underscores and spaces count as
// hyphens, and the API's names (ENTRY_TYPE_QPS) are accepted too.
func parseEntryType(s string) (halovetv1.EntryType, bool) {
	k := strings.ToLower(strings.TrimSpace(s))
	k = strings.NewReplacer("_", "-", " ", "-").Replace(k)
	k = strings.TrimPrefix(k, "entry-type-")
	t, ok := entryTypeWords[k]
	return t, ok
}

// entryLineError is a problem on one line of an entries file.
type entryLineError struct {
	line int
	msg  string
}

func (e entryLineError) String() string { return fmt.Sprintf("line %d: %s", e.line, e.msg) }

// maxEntryLineErrors bounds the problems reported for one file.
const maxEntryLineErrors = 200

var plainDecimal = regexp.MustCompile(`^[0-9]+(\.[0-9]+)?$|^\.[0-9]+$`)

// readEntries parses an entries file. It returns the entries with their line numbers and
// every problem found (at most maxEntryLineErrors).
func readEntries(r io.Reader) ([]*halovetv1.NationalEntry, []int, []entryLineError) {
	cr := csv.NewReader(r)
	cr.Comment = '#'
	cr.FieldsPerRecord = -1
	cr.TrimLeadingSpace = true
	var errs []entryLineError
	fail := func(line int, format string, args ...any) {
		if len(errs) < maxEntryLineErrors {
			errs = append(errs, entryLineError{line, fmt.Sprintf(format, args...)})
		}
	}
	header, err := cr.Read()
	if err != nil {
		if errors.Is(err, io.EOF) {
			return nil, nil, []entryLineError{{1, "the file is empty; the first line must name the columns: " + strings.Join(entryColumns, ",")}}
		}
		return nil, nil, []entryLineError{{1, "cannot read the header: " + err.Error()}}
	}
	hline, _ := cr.FieldPos(0)
	col := map[string]int{}
	for i, h := range header {
		name := strings.ToLower(strings.TrimSpace(strings.TrimPrefix(h, "\ufeff")))
		if _, dup := col[name]; dup {
			fail(hline, "column %q appears twice", name)
		}
		known := false
		for _, c := range entryColumns {
			known = known || c == name
		}
		if !known {
			fail(hline, "unknown column %q; the columns are %s", name, strings.Join(entryColumns, ", "))
		}
		col[name] = i
	}
	for _, c := range entryColumns[:5] {
		if _, ok := col[c]; !ok {
			hint := ""
			if _, ok := col["record_key"]; ok {
				hint = "; this looks like a shipments file: check it with 'halovet check FILE'"
			}
			fail(hline, "required column %q is missing; the header must name %s (note and outside_customs are optional)%s", c, strings.Join(entryColumns[:5], ", "), hint)
		}
	}
	if len(errs) > 0 {
		return nil, nil, errs
	}
	var out []*halovetv1.NationalEntry
	var lines []int
	keys := map[string]int{}
	for {
		rec, err := cr.Read()
		if errors.Is(err, io.EOF) {
			break
		}
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			fail(pe.Line, "%v", pe.Err)
			continue
		}
		if err != nil {
			fail(hline, "%v", err)
			break
		}
		line, _ := cr.FieldPos(0) // a record was read: its first field has a position
		if len(rec) != len(header) {
			fail(line, "%d fields where the header has %d", len(rec), len(header))
			continue
		}
		get := func(c string) string {
			if i, ok := col[c]; ok {
				return strings.TrimSpace(rec[i])
			}
			return ""
		}
		e := &halovetv1.NationalEntry{EntryKey: get("entry_key"), Substance: get("substance"), Note: get("note")}
		bad := false
		if e.EntryKey == "" {
			fail(line, "entry_key is empty; give each entry a key of your own")
			bad = true
		} else if first, dup := keys[e.EntryKey]; dup {
			fail(line, "entry_key %q is also on line %d; each key once per file", e.EntryKey, first)
			bad = true
		} else {
			keys[e.EntryKey] = line
		}
		switch strings.ToLower(get("outside_customs")) {
		case "", "no", "false":
		case "yes", "true":
			e.OutsideCustoms = true
		default:
			fail(line, "outside_customs %q: give yes or no (or leave it empty for no)", get("outside_customs"))
			bad = true
		}
		if y, err := strconv.Atoi(get("year")); err != nil || y < 1986 || y > 2100 {
			fail(line, "year %q: give a calendar year from 1986 to 2100", get("year"))
			bad = true
		} else {
			e.Year = int32(y)
		}
		if t, ok := parseEntryType(get("entry_type")); ok {
			e.EntryType = t
		} else {
			fail(line, "entry_type %q: use production, destruction, feedstock, qps, historical-import, historical-export or historical-export-non-party", get("entry_type"))
			bad = true
		}
		if e.Substance == "" {
			fail(line, "substance is empty; give a designation such as HCFC-22")
			bad = true
		}
		mt := get("metric_tonnes")
		if v, err := strconv.ParseFloat(mt, 64); err != nil || !plainDecimal.MatchString(mt) || math.IsInf(v, 0) {
			fail(line, "metric_tonnes %q: give metric tonnes as a plain number ≥ 0 with a decimal point, e.g. 12.5 (no thousands separators, no unit)", mt)
			bad = true
		} else {
			e.MetricTonnes = wireDec(strings.TrimSpace(mt)).String()
		}
		if !bad {
			out = append(out, e)
			lines = append(lines, line)
		}
	}
	if len(errs) == 0 && len(out) == 0 {
		errs = append(errs, entryLineError{hline, "the file holds no entries after its header"})
	}
	return out, lines, errs
}

// entriesPerCall is the server's limit of entries in one transaction.
const entriesPerCall = 10000

var violationIndex = regexp.MustCompile(`^entries\[(\d+)\]\.?(.*)$`)

// lineViolations rewrites a refused call's field violations with the file's line numbers.
func lineViolations(err error, lines []int) error {
	return fileLineViolations(err, lines, violationIndex, "the server refused the entries; nothing of this part was stored")
}

// fileLineViolations rewrites the field violations of a refused call that carried a file's
// rows as a repeated field (index matches "FIELD[i].rest") with the file's line numbers,
// under the heading what; other errors pass unchanged.
func fileLineViolations(err error, lines []int, index *regexp.Regexp, what string) error {
	st, ok := status.FromError(err)
	if !ok || st.Code() != codes.InvalidArgument {
		return err
	}
	var msgs []string
	for _, d := range st.Details() {
		br, ok := d.(*errdetails.BadRequest)
		if !ok {
			continue
		}
		for _, v := range br.GetFieldViolations() {
			m := index.FindStringSubmatch(v.GetField())
			if m == nil {
				msgs = append(msgs, v.GetField()+": "+v.GetDescription())
				continue
			}
			i, _ := strconv.Atoi(m[1])
			line := 0
			if i < len(lines) {
				line = lines[i]
			}
			msgs = append(msgs, fmt.Sprintf("line %d: %s: %s", line, m[2], v.GetDescription()))
		}
	}
	if len(msgs) == 0 {
		return err
	}
	return &exitError{code: 2, err: fmt.Errorf("%s:\n  %s", what, strings.Join(msgs, "\n  "))}
}

func defineEntries(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	output := fs.String("output", "text", "output: text, csv (the stored entries in the file format), or json (the API's response; see 'halovet help json')")
	list := fs.Bool("list", false, "list the stored entries instead of importing a file")
	year := fs.Int("year", 0, "with --list: only this year")
	return func(ctx context.Context, args []string) error {
		switch *output {
		case "text", "csv", "json":
		default:
			return usageErr("--output %q: use text, csv or json", *output)
		}
		if *list {
			if len(args) != 0 {
				return usageErr("--list takes no FILE")
			}
		} else if len(args) != 1 {
			return usageErr("give exactly one FILE.csv, or --list (see --help)")
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		if *list {
			resp, err := halovetv1.ReadAllPages(ctx, halovetv1.NewConsumptionServiceClient(conn).ListNationalEntries,
				&halovetv1.ListNationalEntriesRequest{Year: int32(*year), PageSize: listPageSize}, "entries")
			if err != nil {
				return err
			}
			return writeEntries(os.Stdout, resp.GetEntries(), fmt.Sprintf("%d stored entries", len(resp.GetEntries())), *output, resp)
		}
		path := args[0]
		resp, err := importEntries(ctx, conn, path)
		if err != nil {
			return err
		}
		return writeEntries(os.Stdout, resp.GetEntries(), fmt.Sprintf("stored %d entries from %s (new or replacing the entry of the same key)", resp.GetStored(), path), *output, resp)
	}
}

// importEntries checks the file and stores its entries; nothing is sent when a line is
// wrong.
func importEntries(ctx context.Context, conn *grpc.ClientConn, path string) (*halovetv1.RecordNationalEntriesResponse, error) {
	f, err := os.Open(path)
	if err != nil {
		return nil, &exitError{code: 2, err: err}
	}
	defer f.Close()
	entries, lines, errs := readEntries(f)
	if len(errs) > 0 {
		msgs := make([]string, len(errs))
		for i, e := range errs {
			msgs[i] = e.String()
		}
		more := ""
		if len(errs) == maxEntryLineErrors {
			more = fmt.Sprintf("\n  (only the first %d problems are shown)", maxEntryLineErrors)
		}
		return nil, &exitError{code: 2, err: fmt.Errorf("%s: nothing was stored:\n  %s%s", path, strings.Join(msgs, "\n  "), more)}
	}
	client := halovetv1.NewConsumptionServiceClient(conn)
	total := &halovetv1.RecordNationalEntriesResponse{}
	for start := 0; start < len(entries); start += entriesPerCall {
		end := min(start+entriesPerCall, len(entries))
		resp, err := client.RecordNationalEntries(ctx, &halovetv1.RecordNationalEntriesRequest{Entries: entries[start:end]})
		if err != nil {
			if start > 0 {
				fmt.Fprintf(os.Stderr, "lines up to %d were stored in earlier parts\n", lines[start-1])
			}
			return nil, lineViolations(err, lines[start:end])
		}
		total.Stored += resp.GetStored()
		total.Entries = append(total.Entries, resp.GetEntries()...)
	}
	return total, nil
}

func writeEntries(w io.Writer, es []*halovetv1.NationalEntry, heading, output string, resp proto.Message) error {
	switch output {
	case "json":
		return wirejson.Doc(w, resp)
	case "csv":
		cw := csv.NewWriter(w)
		_ = cw.Write(entryColumns)
		for _, e := range es {
			_ = cw.Write([]string{e.GetEntryKey(), strconv.Itoa(int(e.GetYear())), entryTypeWord(e.GetEntryType()),
				e.GetSubstance(), e.GetMetricTonnes(), e.GetNote(), yesNo(e.GetOutsideCustoms())})
		}
		cw.Flush()
		return cw.Error()
	}
	fmt.Fprintln(w, heading)
	if len(es) > 0 {
		fmt.Fprintln(w)
		tw := newTable(w)
		fmt.Fprintln(tw, "entry key\tyear\tentry type\tsubstance\tmetric t\toutside customs\tnote\t")
		for _, e := range es {
			fmt.Fprintf(tw, "%s\t%d\t%s\t%s\t%s\t%s\t%s\t\n", e.GetEntryKey(), e.GetYear(), entryTypeWord(e.GetEntryType()),
				e.GetSubstance(), showT(e.GetMetricTonnes()), yesNo(e.GetOutsideCustoms()), e.GetNote())
		}
		if err := tw.Flush(); err != nil {
			return err
		}
	}
	_, err := io.WriteString(w, "\n"+reportFooter(nil))
	return err
}

// yesNo is the file's word for a flag.
func yesNo(b bool) string {
	if b {
		return "yes"
	}
	return "no"
}
