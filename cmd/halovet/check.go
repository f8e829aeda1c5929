package main

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync/atomic"
	"text/tabwriter"
	"time"

	"github.com/spf13/pflag"
	"google.golang.org/grpc"
	"google.golang.org/grpc/codes"
	"google.golang.org/grpc/status"

	"github.com/halovet/halovet/internal/shipstream"
	"github.com/halovet/halovet/internal/wirejson"
	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
	"github.com/halovet/halovet/service"
	"github.com/halovet/halovet/validate"
)

func init() {
	addVerb("check", "check (and with --record, record) a batch file of shipments", fmt.Sprintf(checkUsage, csvColumnHelp()), defineCheck)
}

const checkUsage = `check [flags] FILE

Streams the shipment records of FILE to the server and prints a summary: records,
accepted, accepted with warnings, rejected, findings by code, the totals of accepted
shipments and the safety cautions of the substances in the batch. FILE is CSV with a
header row (.csv) or JSON Lines (.jsonl, .ndjson); --format overrides the extension,
and FILE "-" reads standard input. The file is read as it is sent, never whole.

Nothing is stored unless --record is given: then accepted records are stored and draw
down their licence's quota, atomically; a retried file with the same record keys is
not counted twice.

A line that cannot be read (wrong field count, bad quotes, an unknown direction, a
line over --max-line-bytes) is reported with its line number and rejected; the rest
of the file goes on. Exit code: 0 when every record is accepted, 1 when some are
rejected, 2 when the input cannot be used at all (missing file, wrong header).

Examples:
  halovet check testdata/demo/shipments.csv
  halovet check --report verdicts.csv shipments.csv
  halovet check --record --report verdicts.jsonl shipments.jsonl

CSV columns (header names, any order; required ones marked *):
` + "%s"

func csvColumnHelp() string {
	var b strings.Builder
	for _, c := range validate.CSVColumns() {
		mark := " "
		if c.Required {
			mark = "*"
		}
		fmt.Fprintf(&b, "  %s %-22s %s\n", mark, c.Name, c.Meaning)
	}
	return b.String()
}

func defineCheck(fs *pflag.FlagSet) runFunc {
	var cf clientFlags
	cf.register(fs)
	format := fs.String("format", "", "input format: csv or jsonl (default: from the file extension)")
	record := fs.Bool("record", false, "store accepted records and draw their quota")
	report := fs.String("report", "", "write per-record verdicts to this file: .csv, or .json/.jsonl for JSON Lines")
	progress := fs.String("progress", "auto", "progress on stderr: auto (when stderr is a terminal), always, never")
	maxLine := fs.Int("max-line-bytes", validate.DefaultMaxLineBytes, "longest input line accepted, in bytes")
	csvSep := fs.String("csv-separator", "auto", "CSV field separator: auto (semicolon when the header has semicolons and no comma), comma or semicolon")
	output := fs.String("output", "text", "summary format: text (summary and the first 50 rejected lines), json (summary and\nthe first 50 rejected lines; see 'halovet help json') or csv (every rejected line, one row each)")
	perMessage := fs.Int("records-per-message", defaultPerMessage, "records sent in one stream message (1 to 4096); 1 when records trickle in through a pipe")
	return func(ctx context.Context, args []string) error {
		if len(args) != 1 {
			return usageErr("give exactly one FILE (see --help); got %d arguments", len(args))
		}
		if *perMessage < 1 || *perMessage > 4096 {
			return usageErr("--records-per-message %d: use 1 to 4096", *perMessage)
		}
		if *output != "text" && *output != "json" && *output != "csv" {
			return usageErr("--output %q: use text, json or csv", *output)
		}
		opts := checkOptions{path: args[0], record: *record, reportPath: *report, maxLine: *maxLine, output: *output,
			perMessage: *perMessage}
		switch *csvSep {
		case "auto":
		case "comma", ",":
			opts.csvSep = ','
		case "semicolon", ";":
			opts.csvSep = ';'
		default:
			return usageErr("--csv-separator %q: use auto, comma or semicolon", *csvSep)
		}
		var err error
		if opts.format, err = pickFormat(*format, opts.path); err != nil {
			return err
		}
		switch *progress {
		case "always":
			opts.progress = true
		case "never":
		case "auto":
			opts.progress = isTerminal(os.Stderr)
		default:
			return usageErr("--progress %q: use auto, always or never", *progress)
		}
		conn, err := cf.dial()
		if err != nil {
			return err
		}
		defer conn.Close()
		sum, err := checkFile(ctx, conn, opts, os.Stdout, os.Stderr)
		if err != nil {
			return err
		}
		if sum.Rejected > 0 {
			return rejectedErr("%d of %d records rejected", sum.Rejected, sum.Records)
		}
		return nil
	}
}

func pickFormat(flag, path string) (validate.Format, error) {
	if flag != "" {
		f, err := validate.ParseFormat(flag)
		if err != nil {
			return 0, usageErr("--format: %v", err)
		}
		return f, nil
	}
	if f := validate.FormatOfPath(path); f != validate.FormatUnknown {
		return f, nil
	}
	if strings.EqualFold(filepath.Ext(path), ".json") {
		return 0, usageErr("%s: a .json file is one JSON document, such as the registry file 'halovet load FILE' reads; "+
			"check reads shipments as .csv or .jsonl (one JSON object a line): rename it or give --format jsonl", path)
	}
	return 0, usageErr("cannot tell the format of %q from its extension; give --format csv or --format jsonl", path)
}

func isTerminal(f *os.File) bool {
	st, err := f.Stat()
	return err == nil && st.Mode()&os.ModeCharDevice != 0
}

type checkOptions struct {
	path       string
	format     validate.Format
	record     bool
	reportPath string
	maxLine    int
	csvSep     byte // CSV field separator; 0: detected from the header
	progress   bool
	output     string
	perMessage int // records per stream message; 0 means defaultPerMessage
	// brief prints one line of counts instead of the summary (the demo's second run).
	brief bool
	// maxRejected bounds the rejected lines printed; 0 means maxRejectedShown.
	maxRejected int
}

// defaultPerMessage is how many records go in one stream message: enough to spread the
// per-message cost of gRPC, few enough to keep answers flowing.
const defaultPerMessage = 256

// countingReader counts the bytes read, for progress.
type countingReader struct {
	r io.Reader
	n atomic.Int64
}

func (c *countingReader) Read(p []byte) (int, error) {
	n, err := c.r.Read(p)
	c.n.Add(int64(n))
	return n, err
}

// checkFile streams a batch file through the server and writes the summary (and the
// report file). It returns the summary; an error means the batch could not be run.
func checkFile(ctx context.Context, conn *grpc.ClientConn, o checkOptions, stdout, stderr io.Writer) (*validate.Summary, error) {
	var in io.Reader = os.Stdin
	var size int64
	if o.path != "-" {
		f, err := os.Open(o.path)
		if err != nil {
			return nil, &exitError{code: 2, err: err}
		}
		defer f.Close()
		if st, err := f.Stat(); err == nil {
			size = st.Size()
		}
		in = f
	}
	cr := &countingReader{r: in}
	rd, err := validate.NewReader(o.format, cr, validate.WithMaxLineBytes(o.maxLine), validate.WithCSVSeparator(o.csvSep))
	if err != nil {
		return nil, &exitError{code: exitUsage, err: fmt.Errorf("%s: %w%s", o.path, err, otherKindHint(err))}
	}
	var rep validate.ReportWriter
	if o.reportPath != "" {
		rf, err := os.Create(o.reportPath)
		if err != nil {
			return nil, &exitError{code: 2, err: fmt.Errorf("--report: %w", err)}
		}
		defer rf.Close()
		switch strings.ToLower(filepath.Ext(o.reportPath)) {
		case ".csv":
			if rep, err = validate.NewCSVReport(rf); err != nil {
				return nil, err
			}
		case ".json", ".jsonl", ".ndjson":
			rep = validate.NewJSONLReport(rf)
		default:
			return nil, usageErr("--report %q: name a .csv, .json or .jsonl file", o.reportPath)
		}
	}

	ctx, cancel := context.WithCancel(ctx)
	defer cancel()
	svc := halovetv1.NewShipmentServiceClient(conn)
	var stream shipstream.Stream
	if o.record {
		s, err := svc.RecordShipments(ctx)
		if err != nil {
			return nil, err
		}
		stream = shipstream.Record(s)
	} else {
		s, err := svc.CheckShipments(ctx)
		if err != nil {
			return nil, err
		}
		// The JSON Lines report writes the per-component figures.
		_, jsonl := rep.(*validate.JSONLReport)
		stream = shipstream.Check(s, jsonl)
	}

	// The sender reads the file and sends; the items channel carries the order to the
	// receiver.
	pm := o.perMessage
	if pm <= 0 {
		pm = defaultPerMessage
	}
	var counts shipstream.Counts // records sent to the server; lines read, sent or answered here
	items, waitSent := shipstream.Start(ctx, rd, stream, &counts, pm)

	var done atomic.Int64
	stopProgress := startProgress(o.progress, stderr, cr, size, &counts.Read, &done)
	sum := validate.NewSummary()
	rejected := rejectedLines{max: o.maxRejected}
	if o.output == "csv" {
		rejected.max = math.MaxInt // a CSV is read by programs: every rejected line
	}
	if rejected.max <= 0 {
		rejected.max = maxRejectedShown
	}
	var recvErr error
	var stored int64 // records this run stored (replays not counted)
	answers := shipstream.NewAnswers(stream)
	for it := range items {
		v := it.Local
		if v == nil {
			pv, err := answers.Next()
			if err != nil {
				recvErr = err
				cancel()
				break
			}
			if pv.GetRecorded() && !pv.GetReplayed() {
				stored++
			}
			cv := service.VerdictFromProto(pv)
			v = &cv
		}
		sum.Add(v, it.Direction)
		rejected.add(v)
		if rep != nil {
			if err := rep.Write(v); err != nil {
				recvErr = err
				cancel()
				break
			}
		}
		done.Add(1)
	}
	for range items { // drain after an error so the sender can finish
	}
	sendErr := waitSent()
	stopProgress()
	sent := counts.Sent.Load()
	if recvErr == nil && sendErr == nil {
		// The closing summary.
		_, recvErr = answers.Summary(sent)
	}
	if rep != nil {
		if err := rep.Close(); err != nil && recvErr == nil {
			recvErr = err
		}
	}
	if o.record && (sendErr != nil || recvErr != nil) && sent > 0 {
		err := recvErr
		if err == nil {
			err = sendErr
		}
		c := status.Code(unwrapAll(err))
		// Nothing answered and the server gone or silent: unreachable (exit 3), as before.
		silent := done.Load() == 0 && (c == codes.Unavailable || c == codes.DeadlineExceeded)
		if c != codes.Unknown && !silent {
			return nil, &exitError{code: exitInterrupted, err: fmt.Errorf(
				"recording stopped part-way: %d of %d records sent were answered, %d of them newly stored, before %w; "+
					"sending the whole file again is safe: stored records are answered as replays and draw no quota twice",
				done.Load(), sent, stored, err)}
		}
	}
	if sendErr != nil {
		return nil, sendErr
	}
	if recvErr != nil {
		return nil, recvErr
	}
	if o.output == "json" {
		if err := writeSummaryJSON(stdout, sum, o.record, &rejected); err != nil {
			return nil, err
		}
	} else if o.output == "csv" {
		if err := rejected.writeCSV(stdout); err != nil {
			return nil, err
		}
	} else if o.brief {
		fmt.Fprintf(stdout, "%s: %d records, %d accepted, %d accepted with warnings (%d replays), %d rejected\n",
			o.path, sum.Records, sum.Accepted, sum.AcceptedWithWarnings, sum.Replayed, sum.Rejected)
	} else {
		if o.record {
			fmt.Fprintln(stdout, "Recorded batch:", o.path)
		} else {
			fmt.Fprintln(stdout, "Checked batch (nothing stored):", o.path)
		}
		if err := sum.WriteText(stdout); err != nil {
			return nil, err
		}
		if err := rejected.write(stdout, o.reportPath); err != nil {
			return nil, err
		}
	}
	if sum.Records == 0 {
		return sum, usageErr("%s holds no records (blank and # comment lines are skipped)", o.path)
	}
	return sum, nil
}

// startProgress writes progress on w while enabled: on a terminal one line redrawn every
// quarter second; elsewhere (forced with --progress always) a plain line every five
// seconds, without terminal escapes. read counts the lines read, so answered never
// exceeds it.
func startProgress(enabled bool, w io.Writer, cr *countingReader, size int64, read, done *atomic.Int64) (stop func()) {
	if !enabled {
		return func() {}
	}
	tty := false
	if f, ok := w.(*os.File); ok {
		tty = isTerminal(f)
	}
	every := 5 * time.Second
	if tty {
		every = 250 * time.Millisecond
	}
	quit := make(chan struct{})
	finished := make(chan struct{})
	start := time.Now()
	go func() {
		defer close(finished)
		t := time.NewTicker(every)
		defer t.Stop()
		for {
			select {
			case <-quit:
				if tty {
					fmt.Fprint(w, "\r\033[K")
				}
				return
			case <-t.C:
				line := progressLine(cr.n.Load(), size, done.Load(), read.Load(), time.Since(start))
				if tty {
					fmt.Fprintf(w, "\r%s ", line)
				} else {
					fmt.Fprintln(w, line)
				}
			}
		}
	}()
	return func() { close(quit); <-finished }
}

// progressLine is one progress report: answered records out of the lines read so far.
func progressLine(bytesRead, size, answered, read int64, elapsed time.Duration) string {
	answered = min(answered, read)
	rate := float64(answered) / max(elapsed.Seconds(), 0.001)
	if size > 0 {
		pct := min(100*float64(bytesRead)/float64(size), 100)
		bar := int(pct / 5)
		return fmt.Sprintf("[%-20s] %5.1f%%  %d of %d records read answered  %.0f/s", strings.Repeat("#", min(bar, 20)), pct, answered, read, rate)
	}
	return fmt.Sprintf("%d of %d records read answered  %.0f/s", answered, read, rate)
}

// rejectedLines keeps the first rejected lines of a batch for the terminal.
type rejectedLines struct {
	max   int
	first []validate.Verdict
	total int
}

// maxRejectedShown bounds the rejected lines check prints after its summary.
const maxRejectedShown = 50

func (r *rejectedLines) add(v *validate.Verdict) {
	if v.Outcome != validate.OutcomeRejected {
		return
	}
	r.total++
	if len(r.first) < r.max {
		r.first = append(r.first, *v)
	}
}

// rejectedLine is one rejected line as the summary lists it.
type rejectedLine struct {
	Line      int64    `json:"line"`
	RecordKey string   `json:"record_key"`
	Codes     []string `json:"codes"`
	Message   string   `json:"first_message"`
}

// lines returns the kept rejected lines: error codes, and the first error message with
// its field named.
func (r *rejectedLines) lines() []rejectedLine {
	out := make([]rejectedLine, 0, len(r.first))
	for _, v := range r.first {
		l := rejectedLine{Line: int64(v.Line), RecordKey: v.RecordKey, Codes: []string{}}
		for _, f := range v.Findings {
			if f.Severity != validate.SeverityError {
				continue
			}
			l.Codes = append(l.Codes, f.Code)
			if l.Message == "" {
				l.Message = f.Message
				if f.Field != "" && !strings.Contains(l.Message, f.Field) {
					l.Message = f.Field + ": " + l.Message
				}
			}
		}
		out = append(out, l)
	}
	return out
}

// write prints the rejected lines: line number, record key, error codes, first message.
func (r *rejectedLines) write(w io.Writer, reportPath string) error {
	if r.total == 0 {
		return nil
	}
	if r.total > len(r.first) {
		fmt.Fprintf(w, "\nRejected lines (the first %d of %d)\n", len(r.first), r.total)
	} else {
		fmt.Fprintf(w, "\nRejected lines (%d)\n", r.total)
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "line\tkey\tcodes\tfirst message")
	for _, l := range r.lines() {
		key := l.RecordKey
		if key == "" {
			key = "-"
		}
		fmt.Fprintf(tw, "%d\t%s\t%s\t%s\n", l.Line, oneLine(key, 32), strings.Join(l.Codes, ";"), oneLine(l.Message, 100))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if rest := r.total - len(r.first); rest > 0 {
		where := "give --report FILE.csv for every verdict"
		if reportPath != "" {
			where = "every verdict is in the --report file"
		}
		fmt.Fprintf(w, "... and %d more rejected lines (%s)\n", rest, where)
	}
	return nil
}

// writeCSV writes every kept rejected line as a CSV row; the header comes also when none
// was rejected, so a program always finds its columns.
func (r *rejectedLines) writeCSV(w io.Writer) error {
	cw := csv.NewWriter(w)
	_ = cw.Write([]string{"line", "record_key", "codes", "first_message"})
	for _, l := range r.lines() {
		_ = cw.Write([]string{strconv.FormatInt(l.Line, 10), l.RecordKey, strings.Join(l.Codes, ";"), l.Message})
	}
	cw.Flush()
	return cw.Error()
}

// oneLine shortens a message to n characters on one line.
func oneLine(s string, n int) string {
	s = strings.Join(strings.Fields(s), " ")
	if r := []rune(s); len(r) > n {
		return string(r[:n-1]) + "…"
	}
	return s
}

// otherKindHint names the verb for a file of another kind given to check.
func otherKindHint(err error) string {
	var he *validate.HeaderError
	if !errors.As(err, &he) {
		return ""
	}
	for _, u := range he.Unknown {
		if u == `"entry_key"` || u == `"entry_type"` { // HeaderError quotes the names
			return "; this looks like a national entries file: import it with 'halovet entries FILE'"
		}
	}
	return ""
}

// writeSummaryJSON writes the batch summary and the rejected lines kept (the first 50) as
// one document: {"summary": {...}, "rejected_lines": [...], "rejected_lines_not_shown": N}.
func writeSummaryJSON(w io.Writer, s *validate.Summary, recorded bool, rejected *rejectedLines) error {
	pb := &halovetv1.BatchSummary{Records: s.Records, Accepted: s.Accepted, AcceptedWithWarnings: s.AcceptedWithWarnings,
		Rejected: s.Rejected, Replayed: s.Replayed, ErrorsByCode: s.CountsBySeverity(validate.SeverityError),
		WarningsByCode: s.CountsBySeverity(validate.SeverityWarning)}
	if recorded {
		pb.Recorded = s.Accepted + s.AcceptedWithWarnings - s.Replayed
	}
	var summary bytes.Buffer
	if err := wirejson.Doc(&summary, pb); err != nil {
		return err
	}
	lines, err := json.MarshalIndent(rejected.lines(), "  ", "  ")
	if err != nil {
		return err
	}
	_, err = fmt.Fprintf(w, "{\n  \"summary\": %s,\n  \"rejected_lines\": %s,\n  \"rejected_lines_not_shown\": %d\n}\n",
		strings.ReplaceAll(strings.TrimSuffix(summary.String(), "\n"), "\n", "\n  "), lines, rejected.total-len(rejected.first))
	return err
}
