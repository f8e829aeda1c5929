package validate

import (
	"bytes"
	"errors"
	"fmt"
	"io"
	"strconv"
	"strings"

	"github.com/halovet/halovet/terms"
)

// Column is one column of the CSV batch format. The names equal the field names of the wire
// message halovet.v1.ShipmentRecord.
type Column struct {
	Name     string
	Required bool // the header must have it (values may still be empty; the rules judge them)
	Meaning  string
}

// column ids, the index into csvColumns.
const (
	colKey = iota
	colDirection
	colCompany
	colLicence
	colPartner
	colDate
	colSubstance
	colHS
	colCAS
	colFormula
	colTotal
	colUnit
	colPackages
	colFill
	colPurpose
	colCondition
	colComposition
	colMeasured
	numColumns
)

var csvColumns = [numColumns]Column{
	colKey:         {"record_key", true, "the client's own key for the record, unique per company"},
	colDirection:   {"direction", true, "import, export, re-export or transit"},
	colCompany:     {"company_id", true, "registered identifier of the declaring company"},
	colLicence:     {"licence_number", false, "number of the licence the shipment draws on"},
	colPartner:     {"partner_country", true, "ISO 3166-1 alpha-2 code of the partner country"},
	colDate:        {"declaration_date", true, "YYYY-MM-DD"},
	colSubstance:   {"substance", true, "substance or blend: designation, R-number, name or CAS number"},
	colHS:          {"declared_hs_code", false, "HS code, 6 digits or more, dots optional"},
	colCAS:         {"declared_cas_number", false, "CAS Registry Number"},
	colFormula:     {"declared_formula", false, "molecular formula"},
	colTotal:       {"total_net_quantity", false, "total net mass in quantity_unit, a decimal number with a dot; may be empty when net_fill_per_package and package_count are given"},
	colUnit:        {"quantity_unit", true, "kg, t, g or lb"},
	colPackages:    {"package_count", false, "whole number of packages (cylinders, drums, ISO tanks); empty when not declared"},
	colFill:        {"net_fill_per_package", false, "net fill of each package in quantity_unit, a decimal number with a dot; needs package_count"},
	colPurpose:     {"purpose", false, "servicing, manufacturing, feedstock, process-agent, qps, laboratory, destruction, essential-use, critical-use, other, fire-protection-servicing, rocket-engine-solvent, medical-aerosol-burns"},
	colCondition:   {"condition", false, "virgin, used, recycled, reclaimed"},
	colComposition: {"declared_composition", false, "identifier=percent pairs separated by \";\", e.g. HFC-125=44;HFC-143a=52;HFC-134a=4"},
	colMeasured:    {"measured_composition", false, "what an analyser or a laboratory measured: identifier=percent[±uncertainty] separated by \";\", air as air=percent, e.g. HCFC-22=95±0.5;air=5"},
}

// CSVColumns returns the columns of the CSV batch format in their usual order.
func CSVColumns() []Column {
	out := make([]Column, numColumns)
	copy(out, csvColumns[:])
	return out
}

// columnAliases are other spellings of column names that exports use: the US spelling
// "license_number" for licence_number.
var columnAliases = map[string]int{"license_number": colLicence}

// columnByKey maps a normalized header name to its column id.
var columnByKey = func() map[string]int {
	m := make(map[string]int, numColumns+len(columnAliases))
	for i, c := range csvColumns {
		m[enumKey(c.Name)] = i
	}
	for a, id := range columnAliases {
		m[enumKey(a)] = id
	}
	return m
}()

// HeaderError says why a CSV header row was refused.
type HeaderError struct {
	Line      int64
	Problem   string   // e.g. "unknown columns: qty; missing required columns: quantity_unit"
	Expected  []string // every accepted column, required ones first
	Required  []string
	Unknown   []string
	Missing   []string
	Duplicate []string
}

// ErrHeader is wrapped by *HeaderError.
var ErrHeader = errors.New("invalid CSV header")

func (e *HeaderError) Error() string {
	return fmt.Sprintf("line %d: %s; required columns: %s; optional columns: %s",
		e.Line, e.Problem, strings.Join(e.Required, ", "), strings.Join(optionalColumns(), ", "))
}

func (e *HeaderError) Unwrap() error { return ErrHeader }

func requiredColumns() []string {
	var out []string
	for _, c := range csvColumns {
		if c.Required {
			out = append(out, c.Name)
		}
	}
	return out
}

func optionalColumns() []string {
	var out []string
	for _, c := range csvColumns {
		if !c.Required {
			out = append(out, c.Name)
		}
	}
	return out
}

// CSVReader reads the CSV batch format: UTF-8 text, comma-separated, a header row naming the
// columns (any order, case-insensitive; spaces, hyphens and underscores in names are
// ignored; "license_number" is read as licence_number), then one record per line. A header
// that holds semicolons and no comma marks a semicolon-separated file, as spreadsheets write
// CSV where the comma is the decimal separator; WithCSVSeparator fixes the separator instead. Fields follow RFC 4180 quoting within one line: a field
// that holds a comma or a quote is enclosed in double quotes and a quote inside it is doubled.
// A field may not span lines (shipment fields never hold line breaks), so a quoting mistake
// costs one line, never the rest of the file. Blank lines are skipped.
type CSVReader struct {
	sc      *lineScanner
	sep     byte  // field separator: ',' or ';'
	cols    []int // column id of each header position
	fields  []string
	scratch []byte
}

// NewCSVReader reads and checks the header row. A header with unknown, duplicate or missing
// required columns gives a *HeaderError (wrapping ErrHeader) that lists the accepted columns.
func NewCSVReader(r io.Reader, opts ...ReaderOption) (*CSVReader, error) {
	c := &CSVReader{sc: newLineScanner(r, opts)}
	var line []byte
	var err error
	for {
		line, err = c.sc.next()
		if err != nil {
			var tl errLineTooLong
			switch {
			case errors.Is(err, io.EOF):
				return nil, c.headerError("the file is empty; the first line must be a header row", nil, nil, nil)
			case errors.As(err, &tl):
				return nil, c.headerError(fmt.Sprintf("the header line is %d bytes long, over the limit", tl.n), nil, nil, nil)
			}
			return nil, fmt.Errorf("reading CSV header: %w", err)
		}
		if !isSkipped(line) {
			break
		}
	}
	if msg := checkText(line); msg != "" {
		return nil, c.headerError(msg, nil, nil, nil)
	}
	c.sep = c.sc.csvSep
	if c.sep == 0 {
		c.sep = ','
		if bytes.IndexByte(line, ',') < 0 && bytes.IndexByte(line, ';') >= 0 {
			c.sep = ';'
		}
	}
	names, problem := splitCSVLine(string(line), c.sep, nil, &c.scratch)
	if problem != "" {
		return nil, c.headerError(problem, nil, nil, nil)
	}
	if old := oldQuantityColumns(names); len(old) > 0 {
		return nil, c.headerError(oldQuantityProblem("column", old), old, nil, nil)
	}
	seen := [numColumns]bool{}
	var unknown, dup, missing []string
	c.cols = make([]int, len(names))
	for i, n := range names {
		id, ok := columnByKey[enumKey(strings.TrimSpace(n))]
		if !ok {
			unknown = append(unknown, strconv.Quote(cutText(n)))
			c.cols[i] = -1
			continue
		}
		if seen[id] {
			dup = append(dup, csvColumns[id].Name)
		}
		seen[id] = true
		c.cols[i] = id
	}
	for id, col := range csvColumns {
		if col.Required && !seen[id] {
			missing = append(missing, col.Name)
		}
	}
	if !seen[colTotal] && !seen[colFill] {
		missing = append(missing, csvColumns[colTotal].Name+" (or "+csvColumns[colFill].Name+" with "+csvColumns[colPackages].Name+")")
	}
	if len(unknown)+len(dup)+len(missing) > 0 {
		var parts []string
		if len(unknown) > 0 {
			parts = append(parts, "unknown columns: "+strings.Join(unknown, ", "))
		}
		if len(dup) > 0 {
			parts = append(parts, "duplicate columns: "+strings.Join(dup, ", "))
		}
		if len(missing) > 0 {
			parts = append(parts, "missing required columns: "+strings.Join(missing, ", "))
		}
		return nil, c.headerError(strings.Join(parts, "; "), unknown, dup, missing)
	}
	c.fields = make([]string, 0, len(names))
	return c, nil
}

// oldQuantityColumns returns the header names, as written, of the columns the format no
// longer has: "quantity" (read as the fill of each container when a container count was
// given) and "container_count".
func oldQuantityColumns(names []string) []string {
	var out []string
	for _, n := range names {
		switch enumKey(strings.TrimSpace(n)) {
		case "quantity", "containercount":
			out = append(out, strings.TrimSpace(n))
		}
	}
	return out
}

// oldQuantityProblem says what replaces the old quantity columns (or JSON keys: noun).
func oldQuantityProblem(noun string, old []string) string {
	what := "the " + noun + " " + old[0] + " is"
	if len(old) > 1 {
		what = "the " + noun + "s " + strings.Join(old, " and ") + " are"
	}
	return fmt.Sprintf("%s no longer read (it took quantity for the fill of each container when a container count was given): "+
		"give %s (the total net mass in %s), and optionally %s (the number of packages) and %s (the net fill of each package, which must agree with the total)",
		what, csvColumns[colTotal].Name, csvColumns[colUnit].Name, csvColumns[colPackages].Name, csvColumns[colFill].Name)
}

func (c *CSVReader) headerError(problem string, unknown, dup, missing []string) *HeaderError {
	expected := append(requiredColumns(), optionalColumns()...)
	return &HeaderError{Line: c.sc.line, Problem: problem, Expected: expected, Required: requiredColumns(),
		Unknown: unknown, Duplicate: dup, Missing: missing}
}

// Next returns the next record or line error; see RecordReader.
func (c *CSVReader) Next() (Record, *LineError, error) {
	for {
		line, err := c.sc.next()
		if err != nil {
			if le, ok := c.sc.tooLongError(err); ok {
				return Record{}, le, nil
			}
			return Record{}, nil, err
		}
		if isSkipped(line) {
			continue
		}
		lineNo := c.sc.line
		if msg := checkText(line); msg != "" {
			return Record{}, &LineError{Line: lineNo, Reason: msg}, nil
		}
		// One string per line; the fields are substrings of it.
		fields, problem := splitCSVLine(string(line), c.sep, c.fields[:0], &c.scratch)
		c.fields = fields[:0]
		if problem != "" {
			return Record{}, &LineError{Line: lineNo, Reason: problem}, nil
		}
		if len(fields) != len(c.cols) {
			return Record{}, &LineError{Line: lineNo, Reason: fmt.Sprintf("has %d fields, the header has %d; quote fields that hold %s", len(fields), len(c.cols), sepName(c.sep))}, nil
		}
		return c.record(lineNo, fields), nil, nil
	}
}

func (c *CSVReader) record(lineNo int64, fields []string) Record {
	r := Record{Line: lineNo}
	for i, raw := range fields {
		v := strings.TrimSpace(raw)
		switch c.cols[i] {
		case colKey:
			r.Key = v
		case colDirection:
			d, err := terms.ParseDirection(v)
			if err != nil {
				r.Unreadable = append(r.Unreadable, FieldIssue{Field: csvColumns[colDirection].Name, Text: cutText(v), Reason: err.Error()})
			}
			r.Direction = d
		case colCompany:
			r.CompanyID = v
		case colLicence:
			r.LicenceNumber = v
		case colPartner:
			r.PartnerCountry = v
		case colDate:
			r.DeclarationDate = v
		case colSubstance:
			r.Substance = v
		case colHS:
			r.HSCode = v
		case colCAS:
			r.CAS = v
		case colFormula:
			r.Formula = v
		case colTotal:
			r.TotalQuantity = v
		case colUnit:
			r.Unit = v
		case colPackages:
			n, err := parseCount(v)
			if err != nil {
				r.Unreadable = append(r.Unreadable, FieldIssue{Field: csvColumns[colPackages].Name, Text: cutText(v), Reason: err.Error()})
			}
			r.PackageCount = n
		case colFill:
			r.FillPerPackage = v
		case colPurpose:
			p, err := terms.ParsePurpose(v)
			if err != nil {
				r.Unreadable = append(r.Unreadable, FieldIssue{Field: csvColumns[colPurpose].Name, Text: cutText(v), Reason: err.Error()})
			}
			r.Purpose = p
		case colCondition:
			cd, err := terms.ParseCondition(v)
			if err != nil {
				r.Unreadable = append(r.Unreadable, FieldIssue{Field: csvColumns[colCondition].Name, Text: cutText(v), Reason: err.Error()})
			}
			r.Condition = cd
		case colComposition:
			shares, err := parseComposition(v)
			if err != nil {
				r.Unreadable = append(r.Unreadable, FieldIssue{Field: csvColumns[colComposition].Name, Text: cutText(v), Reason: err.Error()})
			}
			r.Composition = shares
		case colMeasured:
			shares, err := ParseMeasured(v)
			if err != nil {
				r.Unreadable = append(r.Unreadable, FieldIssue{Field: csvColumns[colMeasured].Name, Text: cutText(v), Reason: err.Error()})
			}
			r.Measured = shares
		}
	}
	return r
}

// parseCount reads a package count: empty is 0, else a whole number without sign or
// separators.
func parseCount(s string) (int64, error) {
	if s == "" {
		return 0, nil
	}
	for i := 0; i < len(s); i++ {
		if s[i] < '0' || s[i] > '9' {
			if i == 0 && s[0] == '-' && len(s) > 1 {
				continue // a negative count is read, and refused by the quantity rules
			}
			return 0, fmt.Errorf("package count %q is not a whole number; accepted: empty, or a whole number of packages, digits only", cutText(s))
		}
	}
	n, err := strconv.ParseInt(s, 10, 64)
	if err != nil {
		return 0, fmt.Errorf("package count %q is out of range; accepted: 0 to %d", cutText(s), int64(maxContainers))
	}
	return n, nil
}

// sepName names a separator in messages, in the plural.
func sepName(sep byte) string {
	if sep == ';' {
		return "semicolons"
	}
	return "commas"
}

// splitCSVLine splits one line into fields at sep (RFC 4180 quoting, no line breaks inside fields).
// Unquoted fields and quoted fields without doubled quotes are substrings of line. It returns
// a description of the first problem, or "".
func splitCSVLine(line string, sep byte, fields []string, scratch *[]byte) ([]string, string) {
	i := 0
	for n := 1; ; n++ {
		if i < len(line) && line[i] == '"' {
			// Quoted field.
			j := i + 1
			start := j
			escaped := false
			for {
				k := strings.IndexByte(line[j:], '"')
				if k < 0 {
					return fields, fmt.Sprintf("field %d: quoted field is not closed on this line (a field may not span lines; double a quote inside a quoted field)", n)
				}
				j += k
				if j+1 < len(line) && line[j+1] == '"' {
					escaped = true
					j += 2
					continue
				}
				break
			}
			val := line[start:j]
			if escaped {
				b := (*scratch)[:0]
				for p := 0; p < len(val); p++ {
					b = append(b, val[p])
					if val[p] == '"' {
						p++ // skip the second quote of a doubled pair
					}
				}
				*scratch = b
				val = string(b)
			}
			fields = append(fields, val)
			j++ // past the closing quote
			if j == len(line) {
				return fields, ""
			}
			if line[j] != sep {
				return fields, fmt.Sprintf("field %d: text after the closing quote (%q); a quoted field must end at a %s", n, cutText(line[j:min(j+20, len(line))]), sepName(sep)[:len(sepName(sep))-1])
			}
			i = j + 1
			if i == len(line) {
				return append(fields, ""), ""
			}
			continue
		}
		// Unquoted field.
		k := strings.IndexByte(line[i:], sep)
		end := len(line)
		if k >= 0 {
			end = i + k
		}
		val := line[i:end]
		if q := strings.IndexByte(val, '"'); q >= 0 {
			return fields, fmt.Sprintf("field %d: stray quote in unquoted field %q; enclose the whole field in double quotes and double any quote inside it", n, cutText(val))
		}
		fields = append(fields, val)
		if k < 0 {
			return fields, ""
		}
		i = end + 1
		if i == len(line) {
			return append(fields, ""), ""
		}
	}
}
