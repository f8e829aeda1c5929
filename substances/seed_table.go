package substances

import (
	"encoding/csv"
	"errors"
	"fmt"
	"io"
	"io/fs"
	"math"
	"strconv"
	"strings"
)

// seedTable, the reader of one CSV seed file, and the field readers the rows share.

// seedTable reads one CSV seed file with a header line; '#' lines are comments.
type seedTable struct {
	file string
	r    *csv.Reader
	col  map[string]int
	rec  []string
}

func openSeedTable(fsys fs.FS, file string, want []string) (*seedTable, error) {
	f, err := fsys.Open(file)
	if err != nil {
		return nil, &SeedError{File: file, Field: "-", Err: err}
	}
	// The embedded files are small; read them whole so the reader owns no open file.
	b, err := io.ReadAll(f)
	f.Close()
	if err != nil {
		return nil, &SeedError{File: file, Field: "-", Err: err}
	}
	r := csv.NewReader(strings.NewReader(string(b)))
	r.Comment = '#'
	header, err := r.Read()
	if err != nil {
		return nil, &SeedError{File: file, Line: 1, Field: "header", Err: err}
	}
	t := &seedTable{file: file, r: r, col: make(map[string]int, len(header))}
	for i, h := range header {
		t.col[h] = i
	}
	for _, w := range want {
		if _, ok := t.col[w]; !ok {
			line, _ := r.FieldPos(0)
			return nil, &SeedError{File: file, Line: line, Field: "header", Err: fmt.Errorf("missing column %q", w)}
		}
	}
	r.FieldsPerRecord = len(header)
	return t, nil
}

// readSeedRows opens a seed file with the wanted columns and builds one value from each
// row with row, stopping at the first error.
func readSeedRows[T any](fsys fs.FS, file string, want []string, row func(*seedTable) (T, error)) ([]T, error) {
	t, err := openSeedTable(fsys, file, want)
	if err != nil {
		return nil, err
	}
	var out []T
	for {
		ok, err := t.next()
		if err != nil {
			return nil, err
		}
		if !ok {
			return out, nil
		}
		v, err := row(t)
		if err != nil {
			return nil, err
		}
		out = append(out, v)
	}
}

// next reads the next record; it returns false at the end of the file.
func (t *seedTable) next() (bool, error) {
	rec, err := t.r.Read()
	if err == io.EOF {
		return false, nil
	}
	if err != nil {
		line := 0
		var pe *csv.ParseError
		if errors.As(err, &pe) {
			line = pe.Line
		}
		return false, &SeedError{File: t.file, Line: line, Field: "-", Err: err}
	}
	t.rec = rec
	return true, nil
}

func (t *seedTable) get(name string) string { return strings.TrimSpace(t.rec[t.col[name]]) }

func (t *seedTable) fail(field string, format string, args ...any) error {
	line, _ := t.r.FieldPos(t.col[field])
	return &SeedError{File: t.file, Line: line, Field: field, Err: fmt.Errorf(format, args...)}
}

func (t *seedTable) wrap(field string, err error) error {
	line, _ := t.r.FieldPos(t.col[field])
	return &SeedError{File: t.file, Line: line, Field: field, Err: err}
}

// number reads an optional non-negative finite number; ok is false when the field is empty.
func (t *seedTable) number(field string) (v float64, ok bool, err error) {
	s := t.get(field)
	if s == "" {
		return 0, false, nil
	}
	v, err = strconv.ParseFloat(s, 64)
	if err != nil || math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
		return 0, false, t.fail(field, "%q is not a finite number >= 0", s)
	}
	return v, true, nil
}

// source checks that a value's source field names known publications and returns their
// citations joined by "; ". A value needs a source; an empty value must have none.
func (t *seedTable) source(field, srcField string, sources map[string]string) (string, error) {
	v, src := t.get(field), t.get(srcField)
	if v == "" && src == "" {
		return "", nil
	}
	if v == "" {
		return "", t.fail(srcField, "source %q given for an empty %s", src, field)
	}
	if src == "" {
		return "", t.fail(srcField, "value %q of %s names no source; give codes from %s", v, field, seedSourcesFile)
	}
	var cites []string
	for _, code := range strings.Split(src, "+") {
		c, ok := sources[code]
		if !ok {
			return "", t.fail(srcField, "unknown source code %q; codes are listed in %s", code, seedSourcesFile)
		}
		cites = append(cites, c)
	}
	return strings.Join(cites, " + "), nil
}

// sourceNotes collects "what: publication" pairs, grouping the fields that share a publication.
type sourceNotes struct {
	order []string
	what  map[string][]string
}

func (n *sourceNotes) add(what, cite string) {
	if cite == "" {
		return
	}
	if n.what == nil {
		n.what = map[string][]string{}
	}
	if _, ok := n.what[cite]; !ok {
		n.order = append(n.order, cite)
	}
	n.what[cite] = append(n.what[cite], what)
}

func (n *sourceNotes) String() string {
	parts := make([]string, 0, len(n.order))
	for _, c := range n.order {
		parts = append(parts, strings.Join(n.what[c], ", ")+": "+c)
	}
	return strings.Join(parts, "; ")
}

func splitList(s, sep string) []string {
	if strings.TrimSpace(s) == "" {
		return nil
	}
	var out []string
	for _, p := range strings.Split(s, sep) {
		if p = strings.TrimSpace(p); p != "" {
			out = append(out, p)
		}
	}
	return out
}

// numberList reads a '/'-separated list of n non-negative numbers; an empty optional field
// gives nil.
func (t *seedTable) numberList(field string, n int, required bool) ([]float64, error) {
	s := t.get(field)
	if s == "" {
		if required {
			return nil, t.fail(field, "required")
		}
		return nil, nil
	}
	parts := strings.Split(s, "/")
	if len(parts) != n {
		return nil, t.fail(field, "%d values for %d components", len(parts), n)
	}
	out := make([]float64, n)
	for i, p := range parts {
		v, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(v) || math.IsInf(v, 0) || v < 0 {
			return nil, t.fail(field, "value %d %q is not a finite number >= 0", i+1, p)
		}
		out[i] = v
	}
	return out, nil
}
