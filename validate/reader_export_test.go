package validate

import (
	"errors"
	"strings"
	"testing"
)

// exportLine writes one CSV line in the column order of CSVColumns, with the given values by
// column name (others empty), separated by sep; values are written as given (quote them in
// the map when needed).
func exportLine(sep string, vals map[string]string) string {
	var parts []string
	for _, c := range CSVColumns() {
		parts = append(parts, vals[c.Name])
	}
	return strings.Join(parts, sep)
}

func exportHeader(sep string, rename map[string]string) string {
	var parts []string
	for _, c := range CSVColumns() {
		n := c.Name
		if r, ok := rename[n]; ok {
			n = r
		}
		parts = append(parts, n)
	}
	return strings.Join(parts, sep)
}

// A record as a spreadsheet exports it (INVENTED values).
var exportRecord = map[string]string{
	"record_key": "E1", "direction": "import", "company_id": "CO-1", "licence_number": "L-1",
	"partner_country": "XB", "declaration_date": "2025-03-01", "substance": "R-404A",
	"quantity_unit": "kg", "declared_composition": `"HFC-125=44;HFC-143a=52;HFC-134a=4"`,
}

func TestCSVSemicolonDetected(t *testing.T) {
	in := exportHeader(";", nil) + "\r\n" + exportLine(";", exportRecord) + "\r\n"
	rr, err := NewCSVReader(strings.NewReader(in))
	if err != nil {
		t.Fatalf("semicolon header: %v", err)
	}
	items := readAll(t, rr)
	if len(items) != 1 || items[0].lerr != nil {
		t.Fatalf("items %+v", items)
	}
	r := items[0].rec
	if r.Key != "E1" || r.LicenceNumber != "L-1" || r.Substance != "R-404A" || r.DeclarationDate != "2025-03-01" {
		t.Errorf("record read as %+v", r)
	}
	// The quoted composition keeps its own semicolons.
	if len(r.Composition) != 3 || r.Composition[1].Identifier != "HFC-143a" || r.Composition[1].MassPct != 52 {
		t.Errorf("composition %+v", r.Composition)
	}
	// An unquoted composition splits the line: the message names semicolons.
	bad := map[string]string{}
	for k, v := range exportRecord {
		bad[k] = v
	}
	bad["declared_composition"] = "HFC-125=44;HFC-143a=52;HFC-134a=4"
	rr, err = NewCSVReader(strings.NewReader(exportHeader(";", nil) + "\n" + exportLine(";", bad) + "\n"))
	if err != nil {
		t.Fatal(err)
	}
	items = readAll(t, rr)
	if len(items) != 1 || items[0].lerr == nil || !strings.Contains(items[0].lerr.Reason, "quote fields that hold semicolons") || items[0].lerr.Line != 2 {
		t.Errorf("unquoted composition: %+v", items)
	}
	// A comma file is still read with commas, and a field holding a semicolon is no separator.
	comma := map[string]string{}
	for k, v := range exportRecord {
		comma[k] = v
	}
	rr, err = NewCSVReader(strings.NewReader(exportHeader(",", nil) + "\n" + exportLine(",", comma) + "\n"))
	if err != nil {
		t.Fatal(err)
	}
	if items = readAll(t, rr); len(items) != 1 || items[0].lerr != nil || len(items[0].rec.Composition) != 3 {
		t.Errorf("comma file: %+v", items)
	}
}

func TestCSVSeparatorOption(t *testing.T) {
	semi := exportHeader(";", nil) + "\n" + exportLine(";", exportRecord) + "\n"
	// Forcing ',' on a semicolon file reads the whole header as one unknown column.
	if _, err := NewCSVReader(strings.NewReader(semi), WithCSVSeparator(',')); !errors.Is(err, ErrHeader) {
		t.Errorf("forced comma on a semicolon file: %v, want a header error", err)
	}
	rr, err := NewCSVReader(strings.NewReader(semi), WithCSVSeparator(';'))
	if err != nil {
		t.Fatalf("forced semicolon: %v", err)
	}
	if items := readAll(t, rr); len(items) != 1 || items[0].lerr != nil || items[0].rec.Key != "E1" {
		t.Errorf("forced semicolon: %+v", items)
	}
}

func TestCSVLicenseSpelling(t *testing.T) {
	in := exportHeader(",", map[string]string{"licence_number": "License_Number"}) + "\n" + exportLine(",", exportRecord) + "\n"
	rr, err := NewCSVReader(strings.NewReader(in))
	if err != nil {
		t.Fatalf("license_number header: %v", err)
	}
	if items := readAll(t, rr); len(items) != 1 || items[0].rec.LicenceNumber != "L-1" {
		t.Errorf("license_number not read as licence_number: %+v", items)
	}
	// Both spellings at once are the same column twice.
	in = exportHeader(",", nil) + ",license_number\n"
	_, err = NewCSVReader(strings.NewReader(in))
	var he *HeaderError
	if !errors.As(err, &he) || len(he.Duplicate) != 1 || he.Duplicate[0] != "licence_number" {
		t.Errorf("both spellings: %v, want a duplicate licence_number", err)
	}
	// JSON Lines accept the spelling too.
	items := readAll(t, NewJSONLReader(strings.NewReader(`{"record_key":"J1","license_number":"L-9","licenseNumber2":"x"}`+"\n"+`{"record_key":"J2","license_number":"L-9"}`+"\n")))
	if len(items) != 2 || items[0].lerr == nil || items[1].lerr != nil || items[1].rec.LicenceNumber != "L-9" {
		t.Errorf("JSON Lines license_number: %+v", items)
	}
}

// A file saved in Windows-1252 holds "é" as the single byte 0xE9 (Windows-1252 code chart).
func TestLegacyCodePage(t *testing.T) {
	rec := map[string]string{}
	for k, v := range exportRecord {
		rec[k] = v
	}
	rec["company_id"] = "Soci\xe9t\xe9 Froid"
	in := exportHeader(",", nil) + "\n" + exportLine(",", exportRecord) + "\n" + exportLine(",", rec) + "\n"
	rr, err := NewCSVReader(strings.NewReader(in))
	if err != nil {
		t.Fatal(err)
	}
	items := readAll(t, rr)
	if len(items) != 2 || items[0].lerr != nil {
		t.Fatalf("items %+v", items)
	}
	le := items[1].lerr
	if le == nil || le.Line != 3 || !strings.Contains(le.Reason, "0xE9") || !strings.Contains(le.Reason, "legacy code page") || !strings.Contains(le.Reason, "save it as UTF-8") {
		t.Errorf("Windows-1252 line: %+v, want a line 3 error naming the byte and asking for UTF-8", le)
	}
	// JSON Lines: encoding/json would replace the byte silently; the reader refuses the line.
	items = readAll(t, NewJSONLReader(strings.NewReader("{\"record_key\":\"J1\",\"company_id\":\"Soci\xe9t\xe9\"}\n")))
	if len(items) != 1 || items[0].lerr == nil || !strings.Contains(items[0].lerr.Reason, "save it as UTF-8") || items[0].lerr.Line != 1 {
		t.Errorf("JSON Lines in Windows-1252: %+v", items)
	}
	// UTF-16 (a spreadsheet's "Unicode text"): the header is refused with the reason.
	_, err = NewCSVReader(strings.NewReader("\xff\xfer\x00e\x00c\x00"))
	if !errors.Is(err, ErrHeader) || !strings.Contains(err.Error(), "UTF-16") {
		t.Errorf("UTF-16 file: %v", err)
	}
	// Good UTF-8 with accents passes.
	rec["company_id"] = "Société Froid"
	rr, err = NewCSVReader(strings.NewReader(exportHeader(",", nil) + "\n" + exportLine(",", rec) + "\n"))
	if err != nil {
		t.Fatal(err)
	}
	if items = readAll(t, rr); len(items) != 1 || items[0].lerr != nil || items[0].rec.CompanyID != "Société Froid" {
		t.Errorf("UTF-8 accents: %+v", items)
	}
}
