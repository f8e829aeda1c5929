package validate

import (
	"encoding/csv"
	"encoding/json"
	"io"
	"strconv"
)

// RecordFields returns a record's fields as the batch files write them, in the order of
// CSVColumns: what a reader of either format reads back into the same record (the source
// line apart).
func RecordFields(r *Record) []string {
	f := make([]string, numColumns)
	f[colKey] = r.Key
	f[colDirection] = r.Direction.String()
	f[colCompany] = r.CompanyID
	f[colLicence] = r.LicenceNumber
	f[colPartner] = r.PartnerCountry
	f[colDate] = r.DeclarationDate
	f[colSubstance] = r.Substance
	f[colHS] = r.HSCode
	f[colCAS] = r.CAS
	f[colFormula] = r.Formula
	f[colTotal] = r.TotalQuantity
	f[colUnit] = r.Unit
	if r.PackageCount != 0 {
		f[colPackages] = strconv.FormatInt(r.PackageCount, 10)
	}
	f[colFill] = r.FillPerPackage
	f[colPurpose] = r.Purpose.String()
	f[colCondition] = r.Condition.String()
	f[colComposition] = FormatComposition(r.Composition)
	f[colMeasured] = FormatMeasured(r.Measured)
	return f
}

// RecordWriter writes records in a batch format that NewReader of the same format reads.
type RecordWriter interface {
	Write(r *Record) error
	// Flush writes out what is buffered and reports the first error.
	Flush() error
}

// NewRecordWriter returns a writer of format f (FormatCSV with a header row, or
// FormatJSONL, one object per line with the CSV column names as keys and empty fields
// left out).
func NewRecordWriter(f Format, w io.Writer) (RecordWriter, error) {
	switch f {
	case FormatCSV:
		return &csvRecordWriter{w: csv.NewWriter(w)}, nil
	case FormatJSONL:
		return &jsonlRecordWriter{enc: json.NewEncoder(w)}, nil
	}
	return nil, ErrHeader
}

type csvRecordWriter struct {
	w      *csv.Writer
	header bool
}

func (c *csvRecordWriter) Write(r *Record) error {
	if !c.header {
		names := make([]string, numColumns)
		for i, col := range csvColumns {
			names[i] = col.Name
		}
		if err := c.w.Write(names); err != nil {
			return err
		}
		c.header = true
	}
	return c.w.Write(RecordFields(r))
}

func (c *csvRecordWriter) Flush() error {
	c.w.Flush()
	return c.w.Error()
}

type jsonlRecordWriter struct{ enc *json.Encoder }

func (j *jsonlRecordWriter) Write(r *Record) error {
	fields := RecordFields(r)
	// An ordered object: the columns in their usual order.
	buf := []byte{'{'}
	first := true
	for i, v := range fields {
		if v == "" {
			continue
		}
		if !first {
			buf = append(buf, ',')
		}
		first = false
		k, _ := json.Marshal(csvColumns[i].Name)
		s, _ := json.Marshal(v)
		buf = append(buf, k...)
		buf = append(buf, ':')
		buf = append(buf, s...)
	}
	buf = append(buf, '}')
	return j.enc.Encode(json.RawMessage(buf))
}

func (j *jsonlRecordWriter) Flush() error { return nil }
