package validate

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"slices"
	"strconv"
	"strings"

	"github.com/halovet/halovet/terms"
)

// JSONLReader reads the JSON Lines batch format: UTF-8 text, one JSON object per line, with
// the CSV column names as keys ("record_key", "total_net_quantity", ...). The lowerCamelCase names of
// the wire message's JSON mapping ("recordKey") are accepted too, so a file written with
// protojson reads as is. Values are strings, except:
//   - total_net_quantity and net_fill_per_package may be JSON numbers (the literal text is
//     kept, so 1250.5 is read exactly);
//   - package_count may be a number or a string of digits (protojson writes int64 as a string);
//   - direction, purpose and condition may be words ("re-export"), wire names
//     ("DIRECTION_RE_EXPORT") or wire numbers;
//   - declared_composition is an array of {"identifier": "HFC-125", "mass_percent": 44}, or a
//     string in the CSV form;
//   - measured_composition is an array of {"identifier": "HCFC-22", "mass_percent": 95,
//     "uncertainty_points": 0.5}, or a string in the CSV form.
//
// The keys "quantity" and "container_count" of the old format give a line error naming the
// keys that replace them.
//
// "source_line" is accepted and ignored: the reader numbers lines itself. Unknown keys, a
// value of the wrong type, or a line that is not one JSON object give a line error. Blank
// lines are skipped.
type JSONLReader struct {
	sc *lineScanner
}

// NewJSONLReader returns a reader; it reads nothing until Next.
func NewJSONLReader(r io.Reader, opts ...ReaderOption) *JSONLReader {
	return &JSONLReader{sc: newLineScanner(r, opts)}
}

// jsonKeys maps a normalized JSON key to a column id; -2 marks keys that are ignored.
var jsonKeys = func() map[string]int {
	m := make(map[string]int, numColumns+1)
	for i, c := range csvColumns {
		m[enumKey(c.Name)] = i
	}
	for a, id := range columnAliases {
		m[enumKey(a)] = id
	}
	m["sourceline"] = -2
	m["quantity"] = -3
	m["containercount"] = -3
	return m
}()

// Next returns the next record or line error; see RecordReader.
func (j *JSONLReader) Next() (Record, *LineError, error) {
	for {
		line, err := j.sc.next()
		if err != nil {
			if le, ok := j.sc.tooLongError(err); ok {
				return Record{}, le, nil
			}
			return Record{}, nil, err
		}
		if isSkipped(line) {
			continue
		}
		lineNo := j.sc.line
		rec, problem := decodeJSONRecord(line)
		if problem != "" {
			return Record{}, &LineError{Line: lineNo, Reason: problem}, nil
		}
		rec.Line = lineNo
		return rec, nil, nil
	}
}

func decodeJSONRecord(line []byte) (Record, string) {
	// encoding/json would replace invalid UTF-8 silently, so a file in a legacy code page is
	// refused here, before decoding.
	if msg := checkText(line); msg != "" {
		return Record{}, msg
	}
	trimmed := bytes.TrimSpace(line)
	if len(trimmed) == 0 || trimmed[0] != '{' {
		return Record{}, "not a JSON object; each line must be one object such as {\"record_key\":\"A1\",...}"
	}
	dec := json.NewDecoder(bytes.NewReader(trimmed))
	dec.UseNumber()
	var obj map[string]json.RawMessage
	if err := dec.Decode(&obj); err != nil {
		return Record{}, "invalid JSON: " + err.Error()
	}
	if dec.More() {
		return Record{}, "text after the JSON object; put one object per line"
	}
	if _, err := dec.Token(); err != io.EOF {
		return Record{}, "text after the JSON object; put one object per line"
	}
	var r Record
	keys := make([]string, 0, len(obj))
	for k := range obj {
		keys = append(keys, k)
	}
	slices.Sort(keys) // deterministic order of problems
	seen := [numColumns]bool{}
	for _, k := range keys {
		raw := obj[k]
		id, ok := jsonKeys[enumKey(k)]
		if !ok {
			return Record{}, fmt.Sprintf("unknown key %q; accepted keys: %s", cutText(k), strings.Join(append(requiredColumns(), optionalColumns()...), ", "))
		}
		if id == -3 {
			return Record{}, oldQuantityProblem("key", []string{k})
		}
		if id < 0 {
			continue
		}
		if seen[id] {
			return Record{}, fmt.Sprintf("key %q given twice (as %s and another spelling)", cutText(k), csvColumns[id].Name)
		}
		seen[id] = true
		if problem := setJSONField(&r, id, raw); problem != "" {
			return Record{}, problem
		}
	}
	return r, ""
}

// jsonValue classifies a raw JSON value: a string (unquoted), a number literal, null, or
// something else.
func jsonValue(raw json.RawMessage) (text string, kind byte, err error) {
	raw = bytes.TrimSpace(raw)
	if len(raw) == 0 {
		return "", 0, nil
	}
	switch raw[0] {
	case '"':
		var s string
		if err := json.Unmarshal(raw, &s); err != nil {
			return "", 0, err
		}
		return s, 's', nil
	case 'n':
		return "", 'z', nil // null
	case '-', '0', '1', '2', '3', '4', '5', '6', '7', '8', '9':
		return string(raw), 'n', nil
	}
	return "", 'x', nil
}

func setJSONField(r *Record, id int, raw json.RawMessage) string {
	name := csvColumns[id].Name
	if id == colComposition {
		return setJSONComposition(r, raw)
	}
	if id == colMeasured {
		return setJSONMeasured(r, raw)
	}
	text, kind, err := jsonValue(raw)
	if err != nil {
		return fmt.Sprintf("%s: %v", name, err)
	}
	switch kind {
	case 'x':
		return fmt.Sprintf("%s: expected a string, got %s", name, cutText(string(raw)))
	case 'n':
		switch id {
		case colTotal, colFill, colPackages, colDirection, colPurpose, colCondition:
		default:
			return fmt.Sprintf("%s: expected a string, got the number %s", name, cutText(text))
		}
	}
	text = strings.TrimSpace(text)
	switch id {
	case colKey:
		r.Key = text
	case colDirection:
		d, err := parseEnumJSON(text, kind, 4, terms.ParseDirection)
		if err != nil {
			r.Unreadable = append(r.Unreadable, FieldIssue{Field: name, Text: cutText(text), Reason: err.Error()})
		}
		r.Direction = d
	case colCompany:
		r.CompanyID = text
	case colLicence:
		r.LicenceNumber = text
	case colPartner:
		r.PartnerCountry = text
	case colDate:
		r.DeclarationDate = text
	case colSubstance:
		r.Substance = text
	case colHS:
		r.HSCode = text
	case colCAS:
		r.CAS = text
	case colFormula:
		r.Formula = text
	case colTotal:
		r.TotalQuantity = text
	case colFill:
		r.FillPerPackage = text
	case colUnit:
		r.Unit = text
	case colPackages:
		n, err := parseCount(text)
		if err != nil {
			r.Unreadable = append(r.Unreadable, FieldIssue{Field: name, Text: cutText(text), Reason: err.Error()})
		}
		r.PackageCount = n
	case colPurpose:
		p, err := parseEnumJSON(text, kind, int(terms.PurposeMedicalAerosolBurns), terms.ParsePurpose)
		if err != nil {
			r.Unreadable = append(r.Unreadable, FieldIssue{Field: name, Text: cutText(text), Reason: err.Error()})
		}
		r.Purpose = p
	case colCondition:
		c, err := parseEnumJSON(text, kind, 4, terms.ParseCondition)
		if err != nil {
			r.Unreadable = append(r.Unreadable, FieldIssue{Field: name, Text: cutText(text), Reason: err.Error()})
		}
		r.Condition = c
	}
	return ""
}

// parseEnumJSON reads an enum given as a word or as its wire number (0..maxValue).
func parseEnumJSON[E ~int](text string, kind byte, maxValue int, parse func(string) (E, error)) (E, error) {
	if kind == 'n' {
		n, err := strconv.Atoi(text)
		if err != nil || n < 0 || n > maxValue {
			return 0, fmt.Errorf("%w: %s is not a wire number 0 to %d", terms.ErrUnknownValue, cutText(text), maxValue)
		}
		return E(n), nil
	}
	return parse(text)
}

func setJSONComposition(r *Record, raw json.RawMessage) string {
	raw = bytes.TrimSpace(raw)
	name := csvColumns[colComposition].Name
	if len(raw) == 0 || raw[0] == 'n' {
		return ""
	}
	if raw[0] == '"' {
		var s string
		if err := json.Unmarshal(raw, &s); err != nil {
			return fmt.Sprintf("%s: %v", name, err)
		}
		shares, err := parseComposition(s)
		if err != nil {
			r.Unreadable = append(r.Unreadable, FieldIssue{Field: name, Text: cutText(s), Reason: err.Error()})
		}
		r.Composition = shares
		return ""
	}
	if raw[0] != '[' {
		return fmt.Sprintf("%s: expected an array of {\"identifier\": ..., \"mass_percent\": ...} objects", name)
	}
	var items []map[string]json.RawMessage
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	if err := dec.Decode(&items); err != nil {
		return fmt.Sprintf("%s: expected an array of {\"identifier\": ..., \"mass_percent\": ...} objects: %v", name, err)
	}
	shares := make([]DeclaredShare, 0, len(items))
	for i, it := range items {
		var s DeclaredShare
		for k, v := range it {
			text, kind, err := jsonValue(v)
			if err != nil {
				return fmt.Sprintf("%s[%d].%s: %v", name, i, cutText(k), err)
			}
			switch enumKey(k) {
			case "identifier":
				if kind != 's' {
					return fmt.Sprintf("%s[%d].identifier: expected a string", name, i)
				}
				s.Identifier = strings.TrimSpace(text)
			case "masspercent":
				if kind != 'n' && kind != 's' {
					return fmt.Sprintf("%s[%d].mass_percent: expected a number", name, i)
				}
				d, err := ParseDecimal(text)
				if err != nil {
					return fmt.Sprintf("%s[%d].mass_percent: %v", name, i, err)
				}
				s.MassPct = d.Float64()
			default:
				return fmt.Sprintf("%s[%d]: unknown key %q; accepted: identifier, mass_percent", name, i, cutText(k))
			}
		}
		shares = append(shares, s)
	}
	r.Composition = shares
	return ""
}

func setJSONMeasured(r *Record, raw json.RawMessage) string {
	raw = bytes.TrimSpace(raw)
	name := csvColumns[colMeasured].Name
	if len(raw) == 0 || raw[0] == 'n' {
		return ""
	}
	if raw[0] == '"' {
		var s string
		if err := json.Unmarshal(raw, &s); err != nil {
			return fmt.Sprintf("%s: %v", name, err)
		}
		shares, err := ParseMeasured(s)
		if err != nil {
			r.Unreadable = append(r.Unreadable, FieldIssue{Field: name, Text: cutText(s), Reason: err.Error()})
		}
		r.Measured = shares
		return ""
	}
	const want = "expected an array of {\"identifier\": ..., \"mass_percent\": ..., \"uncertainty_points\": ...} objects, or a string such as \"HCFC-22=95±0.5;air=5\""
	if raw[0] != '[' {
		return fmt.Sprintf("%s: %s", name, want)
	}
	var items []map[string]json.RawMessage
	dec := json.NewDecoder(bytes.NewReader(raw))
	dec.UseNumber()
	if err := dec.Decode(&items); err != nil {
		return fmt.Sprintf("%s: %s: %v", name, want, err)
	}
	shares := make([]MeasuredShare, 0, len(items))
	for i, it := range items {
		var s MeasuredShare
		keys := make([]string, 0, len(it))
		for k := range it {
			keys = append(keys, k)
		}
		slices.Sort(keys)
		for _, k := range keys {
			text, kind, err := jsonValue(it[k])
			if err != nil {
				return fmt.Sprintf("%s[%d].%s: %v", name, i, cutText(k), err)
			}
			switch enumKey(k) {
			case "identifier":
				if kind != 's' {
					return fmt.Sprintf("%s[%d].identifier: expected a string", name, i)
				}
				s.Identifier = strings.TrimSpace(text)
			case "masspercent", "uncertaintypoints":
				if kind != 'n' && kind != 's' {
					return fmt.Sprintf("%s[%d].%s: expected a number", name, i, cutText(k))
				}
				d, err := ParseDecimal(text)
				if err != nil {
					return fmt.Sprintf("%s[%d].%s: %v", name, i, cutText(k), err)
				}
				if enumKey(k) == "masspercent" {
					s.MassPct = d.Float64()
				} else {
					s.Uncertainty = d.Float64()
				}
			default:
				return fmt.Sprintf("%s[%d]: unknown key %q; accepted: identifier, mass_percent, uncertainty_points", name, i, cutText(k))
			}
		}
		shares = append(shares, s)
	}
	r.Measured = shares
	return ""
}
