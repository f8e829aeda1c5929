package validate

import (
	"bytes"
	"errors"
	"io"
	"runtime"
	"strings"
	"testing"

	"github.com/halovet/halovet/terms"
)

// item is one result of a reader.
type item struct {
	rec  Record
	lerr *LineError
}

func readAll(t testing.TB, rr RecordReader) []item {
	t.Helper()
	var out []item
	for {
		rec, lerr, err := rr.Next()
		if errors.Is(err, io.EOF) {
			return out
		}
		if err != nil {
			t.Fatalf("Next: unexpected error %v", err)
		}
		out = append(out, item{rec, lerr})
	}
}

const csvHeader = "record_key,direction,company_id,licence_number,partner_country,declaration_date,substance,declared_hs_code,declared_cas_number,declared_formula,total_net_quantity,quantity_unit,package_count,purpose,condition,declared_composition"

func TestCSVReaderGoodFile(t *testing.T) {
	in := "\xef\xbb\xbf" + csvHeader + "\r\n" +
		`A1,import,CO-1,L-1,XA,2025-03-01,HCFC-22,2903.71,75-45-6,CHClF2,13.6,kg,10,servicing,virgin,` + "\r\n" +
		"\r\n" +
		`A2,Re-Export,CO-1,L-2,QM,2025-03-02,"1,1,1,2-tetrafluoroethane",,,,"1250.5",t,,feedstock,,` + "\n" +
		"   \n" +
		`"A""3",transit,CO-2,,XB,2025-03-03,R-404A,,,,30,lb,2,,used,"HFC-125=44;HFC-143a=52;HFC-134a=4%"` // no final newline
	rr, err := NewCSVReader(strings.NewReader(in))
	if err != nil {
		t.Fatalf("NewCSVReader: %v", err)
	}
	items := readAll(t, rr)
	if len(items) != 3 {
		t.Fatalf("got %d items, want 3 records", len(items))
	}
	for _, it := range items {
		if it.lerr != nil {
			t.Fatalf("unexpected line error %v", it.lerr)
		}
	}
	a1, a2, a3 := items[0].rec, items[1].rec, items[2].rec
	if a1.Line != 2 || a1.Key != "A1" || a1.Direction != terms.DirectionImport || a1.PackageCount != 10 ||
		a1.TotalQuantity != "13.6" || a1.CAS != "75-45-6" || a1.Purpose != terms.PurposeServicing || a1.Condition != terms.ConditionVirgin {
		t.Errorf("record A1 read as %+v", a1)
	}
	if a2.Line != 4 || a2.Direction != terms.DirectionReExport || a2.Substance != "1,1,1,2-tetrafluoroethane" || a2.TotalQuantity != "1250.5" || a2.Purpose != terms.PurposeFeedstock {
		t.Errorf("record A2 read as %+v", a2)
	}
	if a3.Line != 6 || a3.Key != `A"3` || a3.Condition != terms.ConditionUsed || len(a3.Composition) != 3 ||
		a3.Composition[1] != (DeclaredShare{"HFC-143a", 52}) || a3.Composition[2].MassPct != 4 {
		t.Errorf("record A3 read as %+v", a3)
	}
	for _, it := range items {
		if len(it.rec.Unreadable) != 0 {
			t.Errorf("line %d: unexpected unreadable fields %v", it.rec.Line, it.rec.Unreadable)
		}
	}
}

func TestCSVReaderHeaderAnyOrderAndCase(t *testing.T) {
	in := "Total Net Quantity, Quantity Unit ,SUBSTANCE,Record-Key,direction,company_id,partner_country,declaration_date\n" +
		"5,kg,HFC-134a,K,export,C,XA,2025-01-02\n"
	rr, err := NewCSVReader(strings.NewReader(in))
	if err != nil {
		t.Fatalf("NewCSVReader: %v", err)
	}
	items := readAll(t, rr)
	if len(items) != 1 || items[0].lerr != nil || items[0].rec.TotalQuantity != "5" || items[0].rec.Unit != "kg" || items[0].rec.Key != "K" {
		t.Fatalf("got %+v", items)
	}
}

func TestCSVReaderWrongHeader(t *testing.T) {
	cases := []struct {
		name, header string
		want         []string
	}{
		{"unknown and missing", "record_key,direction,company_id,partner_country,declaration_date,substance,qty,quantity_unit",
			[]string{`unknown columns: "qty"`, "missing required columns: total_net_quantity", "required columns: record_key"}},
		{"duplicate", csvHeader + ",quantity_unit", []string{"duplicate columns: quantity_unit"}},
		{"data instead of header", "A1,import,CO-1,L-1,XA,2025-03-01,HCFC-22", []string{"unknown columns", "missing required columns"}},
		{"empty file", "", []string{"the file is empty"}},
		{"binary", "\x00\x01\x02garbage", []string{"control character"}},
		{"stray quote", `record_key,"direction`, []string{"not closed"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := NewCSVReader(strings.NewReader(c.header + "\nA,b\n"))
			if c.header == "" {
				_, err = NewCSVReader(strings.NewReader(""))
			}
			var he *HeaderError
			if !errors.As(err, &he) || !errors.Is(err, ErrHeader) {
				t.Fatalf("error = %v, want a *HeaderError wrapping ErrHeader", err)
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q should contain %q", err, w)
				}
			}
			if len(he.Expected) != int(numColumns) {
				t.Errorf("Expected lists %d columns, want all %d", len(he.Expected), numColumns)
			}
		})
	}
}

func TestCSVReaderBadLinesContinue(t *testing.T) {
	good := "K,import,C,L,XA,2025-01-02,HFC-134a,,,,5,kg,,,,"
	lines := []struct {
		text, want string
	}{
		{`K,import,"C,L,XA,2025-01-02,HFC-134a,,,,5,kg,,,,`, "not closed"},
		{`K,imp"ort,C,L,XA,2025-01-02,HFC-134a,,,,5,kg,,,,`, "stray quote"},
		{`"K"x,import,C,L,XA,2025-01-02,HFC-134a,,,,5,kg,,,,`, "text after the closing quote"},
		{`K,import,C`, "has 3 fields, the header has 16"},
		{good + ",extra", "has 17 fields"},
		{"\x00\x00\xff\xfe binary \x01", "control character"},
		{"K,import,C,L,XA,2025-01-02,HFC-134a,,,,5,kg,,,,\xff", "save it as UTF-8"},
	}
	var b strings.Builder
	b.WriteString(csvHeader + "\n")
	for _, l := range lines {
		b.WriteString(l.text + "\n" + good + "\n")
	}
	rr, err := NewCSVReader(strings.NewReader(b.String()))
	if err != nil {
		t.Fatal(err)
	}
	items := readAll(t, rr)
	if len(items) != 2*len(lines) {
		t.Fatalf("got %d items, want %d (each bad line, then the good one after it)", len(items), 2*len(lines))
	}
	for i, l := range lines {
		bad, next := items[2*i], items[2*i+1]
		if bad.lerr == nil || !strings.Contains(bad.lerr.Reason, l.want) {
			t.Errorf("line %q: got %+v, want a line error saying %q", l.text, bad.lerr, l.want)
		} else if bad.lerr.Line != int64(2+2*i) {
			t.Errorf("line error on line %d, want %d", bad.lerr.Line, 2+2*i)
		}
		if next.lerr != nil || next.rec.Key != "K" || next.rec.Line != int64(3+2*i) {
			t.Errorf("good line after %q: got %+v %v", l.text, next.rec, next.lerr)
		}
	}
}

func TestCSVReaderUnreadableFields(t *testing.T) {
	in := csvHeader + "\n" + "K,sideways,C,L,XA,2025-01-02,HFC-134a,,,,5,kg,two,fun,dirty,HFC-125:44\n"
	rr, err := NewCSVReader(strings.NewReader(in))
	if err != nil {
		t.Fatal(err)
	}
	items := readAll(t, rr)
	if len(items) != 1 || items[0].lerr != nil {
		t.Fatalf("want one record, got %+v", items)
	}
	got := map[string]bool{}
	for _, u := range items[0].rec.Unreadable {
		got[u.Field] = true
	}
	for _, f := range []string{"direction", "package_count", "purpose", "condition", "declared_composition"} {
		if !got[f] {
			t.Errorf("field %s should be listed as unreadable; got %v", f, items[0].rec.Unreadable)
		}
	}
}

// repeatReader yields n copies of b without holding them.
type repeatReader struct {
	b byte
	n int64
}

func (r *repeatReader) Read(p []byte) (int, error) {
	if r.n <= 0 {
		return 0, io.EOF
	}
	k := min(int64(len(p)), r.n)
	for i := range p[:k] {
		p[i] = r.b
	}
	r.n -= k
	return int(k), nil
}

func TestReadersSkipTenMegabyteLine(t *testing.T) {
	const size = 10 << 20
	goodCSV := "K,import,C,L,XA,2025-01-02,HFC-134a,,,,5,kg,,,,\n"
	goodJSON := `{"record_key":"K","direction":"import"}` + "\n"
	for _, format := range []Format{FormatCSV, FormatJSONL} {
		t.Run(format.String(), func(t *testing.T) {
			var head, good string
			if format == FormatCSV {
				head, good = csvHeader+"\n"+goodCSV, goodCSV
			} else {
				head, good = goodJSON, goodJSON
			}
			src := io.MultiReader(strings.NewReader(head), &repeatReader{b: 'x', n: size}, strings.NewReader("\n"+good))
			var before, after runtime.MemStats
			runtime.GC()
			runtime.ReadMemStats(&before)
			rr, err := NewReader(format, src)
			if err != nil {
				t.Fatal(err)
			}
			items := readAll(t, rr)
			runtime.ReadMemStats(&after)
			if len(items) != 3 {
				t.Fatalf("got %d items, want record, line error, record", len(items))
			}
			firstLine := int64(2)
			if format == FormatJSONL {
				firstLine = 1
			}
			if items[0].lerr != nil || items[2].lerr != nil || items[2].rec.Line != firstLine+2 {
				t.Errorf("records around the long line: %+v / %+v", items[0], items[2])
			}
			le := items[1].lerr
			if le == nil || le.Line != firstLine+1 || !strings.Contains(le.Reason, "over the limit of 1048576 bytes") {
				t.Errorf("long line: got %+v, want a line error on line %d about the limit", le, firstLine+1)
			}
			if grew := after.TotalAlloc - before.TotalAlloc; grew > 4<<20 {
				t.Errorf("reading allocated %d bytes; a 10 MB line must not be held whole (limit 1 MiB + buffers)", grew)
			}
		})
	}
}

func TestJSONLReader(t *testing.T) {
	lines := []string{
		`{"record_key":"J1","direction":"import","company_id":"C","licence_number":"L","partner_country":"XA","declaration_date":"2025-01-02","substance":"R-410A","total_net_quantity":1250.50,"quantity_unit":"kg","package_count":"3","net_fill_per_package":416.83,"purpose":"PURPOSE_SERVICING","condition":2,"declared_composition":[{"identifier":"HFC-32","mass_percent":50},{"identifier":"HFC-125","mass_percent":"50"}]}`,
		``,
		`{"recordKey":"J2","direction":"DIRECTION_RE_EXPORT","sourceLine":99,"totalNetQuantity":"7","declaredComposition":"HFC-32=50;HFC-125=50","measuredComposition":[{"identifier":"HFC-32","mass_percent":49.5,"uncertainty_points":0.5},{"identifier":"HFC-125","massPercent":50.5}]}`,
		`{"record_key":"J3",`,
		`[1,2,3]`,
		`{"record_key":"J4","qty":"5"}`,
		`{"record_key":"J5"} {"record_key":"J6"}`,
		`{"record_key":5}`,
		`{"record_key":"J7","declared_composition":[{"identifier":"HFC-32","share":50}]}`,
		"\x00\x01binary\xff",
		`{"record_key":"J8","direction":"sideways","package_count":-2}`,
		`{"record_key":"J9","record-key":"J9"}`,
		`{"record_key":"J10","quantity":"13.6","container_count":10}`,
		`{"record_key":"J11","measured_composition":"HCFC-22=95±0.5;air=5"}`,
		`{"record_key":"J12","measured_composition":[{"identifier":"HCFC-22","share":95}]}`,
	}
	rr := NewJSONLReader(strings.NewReader(strings.Join(lines, "\n")))
	items := readAll(t, rr)
	wantErr := map[int64]string{
		4:  "invalid JSON",
		5:  "not a JSON object",
		6:  `unknown key "qty"`,
		7:  "text after the JSON object",
		8:  "record_key: expected a string",
		9:  `unknown key "share"`,
		10: "control character",
		12: "given twice",
		13: "the key container_count is no longer read",
		15: `unknown key "share"; accepted: identifier, mass_percent, uncertainty_points`,
	}
	if len(items) != len(lines)-1 {
		t.Fatalf("got %d items, want %d (one per non-blank line)", len(items), len(lines)-1)
	}
	for _, it := range items {
		line := it.rec.Line
		if it.lerr != nil {
			line = it.lerr.Line
		}
		want, isErr := wantErr[line]
		switch {
		case isErr && (it.lerr == nil || !strings.Contains(it.lerr.Reason, want)):
			t.Errorf("line %d: got %+v, want a line error saying %q", line, it.lerr, want)
		case !isErr && it.lerr != nil:
			t.Errorf("line %d: unexpected line error %v", line, it.lerr)
		}
	}
	j1 := items[0].rec
	if j1.Key != "J1" || j1.TotalQuantity != "1250.50" || j1.PackageCount != 3 || j1.FillPerPackage != "416.83" || j1.Purpose != terms.PurposeServicing ||
		j1.Condition != terms.ConditionUsed || len(j1.Composition) != 2 || j1.Composition[1].MassPct != 50 || j1.Line != 1 {
		t.Errorf("J1 read as %+v", j1)
	}
	j2 := items[1].rec
	if j2.Key != "J2" || j2.Direction != terms.DirectionReExport || j2.Line != 3 || len(j2.Composition) != 2 || j2.TotalQuantity != "7" ||
		len(j2.Measured) != 2 || j2.Measured[0] != (MeasuredShare{Identifier: "HFC-32", MassPct: 49.5, Uncertainty: 0.5}) || j2.Measured[1].MassPct != 50.5 {
		t.Errorf("J2 read as %+v", j2)
	}
	j8 := items[9].rec
	if j8.Key != "J8" || len(j8.Unreadable) != 1 || j8.Unreadable[0].Field != "direction" || j8.PackageCount != -2 {
		t.Errorf("J8 read as %+v", j8)
	}
	j11 := items[12].rec
	if j11.Key != "J11" || len(j11.Measured) != 2 || j11.Measured[0] != (MeasuredShare{Identifier: "HCFC-22", MassPct: 95, Uncertainty: 0.5}) || j11.Measured[1].Identifier != "air" {
		t.Errorf("J11 read as %+v", j11)
	}
	if le := items[11].lerr; le == nil || !strings.Contains(le.Reason, "give total_net_quantity") || !strings.Contains(le.Reason, "package_count") || !strings.Contains(le.Reason, "net_fill_per_package") {
		t.Errorf("old key container_count: got %+v, want one error naming total_net_quantity, package_count and net_fill_per_package", le)
	}
}

// TestCSVReaderOldQuantityHeader: the header of the old format gets one error naming the
// columns that replace it.
func TestCSVReaderOldQuantityHeader(t *testing.T) {
	old := "record_key,direction,company_id,licence_number,partner_country,declaration_date,substance,quantity,quantity_unit,container_count\n"
	_, err := NewCSVReader(strings.NewReader(old + "K,import,C,L,XA,2025-01-02,HCFC-22,13.6,kg,10\n"))
	var he *HeaderError
	if !errors.As(err, &he) {
		t.Fatalf("old header: error %v, want a *HeaderError", err)
	}
	for _, want := range []string{"the columns quantity and container_count are no longer read", "give total_net_quantity", "package_count", "net_fill_per_package"} {
		if !strings.Contains(he.Problem, want) {
			t.Errorf("problem %q does not say %q", he.Problem, want)
		}
	}
	if strings.Contains(he.Problem, "unknown columns") || strings.Count(err.Error(), "no longer read") != 1 {
		t.Errorf("want one error about the old columns, got %q", err)
	}
}

// TestCSVReaderFillAndMeasured reads the fill per package and the measured composition.
func TestCSVReaderFillAndMeasured(t *testing.T) {
	in := "record_key,direction,company_id,partner_country,declaration_date,substance,quantity_unit,package_count,net_fill_per_package,measured_composition\n" +
		"K,import,C,XA,2025-01-02,HFC-134a,kg,10,11.3,HFC-134a=99±1;air=1\n" +
		"K2,import,C,XA,2025-01-02,HFC-134a,kg,10,11.3,HFC-134a\n"
	rr, err := NewCSVReader(strings.NewReader(in))
	if err != nil {
		t.Fatal(err)
	}
	items := readAll(t, rr)
	if len(items) != 2 || items[0].lerr != nil || items[1].lerr != nil {
		t.Fatalf("want two records, got %+v", items)
	}
	r := items[0].rec
	if r.FillPerPackage != "11.3" || r.PackageCount != 10 || r.TotalQuantity != "" || len(r.Measured) != 2 ||
		r.Measured[0] != (MeasuredShare{Identifier: "HFC-134a", MassPct: 99, Uncertainty: 1}) {
		t.Errorf("read as %+v", r)
	}
	if u := items[1].rec.Unreadable; len(u) != 1 || u[0].Field != "measured_composition" {
		t.Errorf("a reading without \"=\" should be unreadable in measured_composition, got %+v", u)
	}
	// Neither total nor fill in the header.
	_, err = NewCSVReader(strings.NewReader("record_key,direction,company_id,partner_country,declaration_date,substance,quantity_unit,package_count\n"))
	if err == nil || !strings.Contains(err.Error(), "missing required columns: total_net_quantity (or net_fill_per_package with package_count)") {
		t.Errorf("header without quantity: error %v", err)
	}
}

func TestParseComposition(t *testing.T) {
	got, err := parseComposition(" HFC-32 = 50 ; 1,1,1,2-tetrafluoroethane=50% ;")
	if err != nil || len(got) != 2 || got[0] != (DeclaredShare{"HFC-32", 50}) || got[1].Identifier != "1,1,1,2-tetrafluoroethane" {
		t.Fatalf("parseComposition = %v, %v", got, err)
	}
	for _, bad := range []string{"HFC-32", "=50", "HFC-32=5,5", "HFC-32=abc"} {
		if _, err := parseComposition(bad); err == nil {
			t.Errorf("parseComposition(%q) should fail", bad)
		}
	}
	shares := []DeclaredShare{{"HFC-32", 50}, {"HFC-125", 49.5}}
	back, err := parseComposition(FormatComposition(shares))
	if err != nil || len(back) != 2 || back[1] != shares[1] {
		t.Errorf("FormatComposition round trip: %v, %v", back, err)
	}
}

// expectedLines lists the 1-based numbers of lines a reader must answer for: every line that
// is not blank, or is longer than max. The CSV header (the first such line) is dropped.
func expectedLines(data []byte, max int, csv bool) []int64 {
	var out []int64
	lines := bytes.Split(data, []byte("\n"))
	if len(lines) > 0 && len(lines[len(lines)-1]) == 0 {
		lines = lines[:len(lines)-1] // the final newline ends the last line
	}
	for i, l := range lines {
		long := len(l) > max+1 || (len(l) == max+1 && l[len(l)-1] != '\r')
		l = bytes.TrimSuffix(l, []byte("\r"))
		if i == 0 {
			l = bytes.TrimPrefix(l, []byte("\xef\xbb\xbf"))
		}
		// Blank lines and '#' comment lines are passed over (isSkipped); too-long lines
		// are answered with a line error whatever they hold.
		if t := bytes.TrimSpace(l); long || (len(t) > 0 && t[0] != '#') {
			out = append(out, int64(i+1))
		}
	}
	if csv && len(out) > 0 {
		out = out[1:]
	}
	return out
}

func fuzzReader(t *testing.T, data []byte, csv bool) {
	const max = 200
	var rr RecordReader
	if csv {
		c, err := NewCSVReader(bytes.NewReader(data), WithMaxLineBytes(max))
		if err != nil {
			var he *HeaderError
			if !errors.As(err, &he) {
				t.Fatalf("NewCSVReader: error %v is not a *HeaderError", err)
			}
			return
		}
		rr = c
	} else {
		rr = NewJSONLReader(bytes.NewReader(data), WithMaxLineBytes(max))
	}
	want := expectedLines(data, max, csv)
	items := readAll(t, rr)
	if len(items) != len(want) {
		t.Fatalf("got %d items for %d answerable lines %v", len(items), len(want), want)
	}
	for i, it := range items {
		line := it.rec.Line
		if it.lerr != nil {
			line = it.lerr.Line
			if it.lerr.Reason == "" {
				t.Fatalf("line error without a reason on line %d", line)
			}
		}
		if line != want[i] {
			t.Fatalf("item %d is for line %d, want line %d", i, line, want[i])
		}
	}
}

func FuzzCSVReader(f *testing.F) {
	f.Add([]byte(csvHeader + "\nK,import,C,L,XA,2025-01-02,HFC-134a,,,,5,kg,,,,\n"))
	f.Add([]byte(csvHeader + "\r\n\"K\"\"\",import,C,L,XA,2025-01-02,\"a,b\",,,,5,kg,,,,\r\n\n"))
	f.Add([]byte(csvHeader + "\nK,\"unclosed,C\nK,im\"port\n\x00\xff\n"))
	f.Add([]byte("record_key,quantity\n1,2\n"))
	f.Add([]byte("\xef\xbb\xbf" + csvHeader + "\n" + strings.Repeat("y", 300) + "\n,,,,,,,,,,,,,,,\n"))
	f.Fuzz(func(t *testing.T, data []byte) { fuzzReader(t, data, true) })
}

func FuzzJSONLReader(f *testing.F) {
	f.Add([]byte(`{"record_key":"J1","total_net_quantity":1.5,"declared_composition":[{"identifier":"HFC-32","mass_percent":50}]}` + "\n"))
	f.Add([]byte("{\"record_key\":\n[1]\n\n \n{} {}\n\x00\n"))
	f.Add([]byte(`{"direction":3,"purpose":"qps","condition":"USED","package_count":"9","net_fill_per_package":"1.5"}`))
	f.Add([]byte(strings.Repeat("{", 300) + "\r\n{\"a\":1}\r\n"))
	f.Fuzz(func(t *testing.T, data []byte) { fuzzReader(t, data, false) })
}

// TestReadersSkipCommentLines: a line whose first non-space character is '#' is passed
// over by both readers, before and after the CSV header, and line numbers still count it.
func TestReadersSkipCommentLines(t *testing.T) {
	rec := `A1,import,CO-1,L-1,XA,2025-03-01,HCFC-22,2903.71,75-45-6,CHClF2,13.6,kg,10,servicing,virgin,`
	csvIn := "# invented demo batch\n" + csvHeader + "\n  # a comment after the header\n" + rec + "\n"
	cr, err := NewCSVReader(strings.NewReader(csvIn))
	if err != nil {
		t.Fatalf("NewCSVReader with a comment before the header: %v", err)
	}
	got := readAll(t, cr)
	if len(got) != 1 || got[0].lerr != nil || got[0].rec.Key != "A1" || got[0].rec.Line != 4 {
		t.Fatalf("CSV with comments: %+v; want one record A1 on line 4", got)
	}
	jsonIn := "# invented\n" + `{"record_key":"J1","direction":"import","company_id":"CO-1","substance":"HCFC-22","total_net_quantity":"1","quantity_unit":"kg"}` + "\n#end\n"
	jr := NewJSONLReader(strings.NewReader(jsonIn))
	got = readAll(t, jr)
	if len(got) != 1 || got[0].lerr != nil || got[0].rec.Key != "J1" || got[0].rec.Line != 2 {
		t.Fatalf("JSON Lines with comments: %+v; want one record J1 on line 2", got)
	}
}
