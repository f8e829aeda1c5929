package main

import (
	"strings"
	"testing"

	halovetv1 "github.com/halovet/halovet/proto/halovet/v1"
)

// Tests of the national entries file reader.

func TestReadEntries(t *testing.T) {
	good := "# invented\nentry_key,year,entry_type,substance,metric_tonnes,note\n" +
		"k1,2009,historical-import,HCFC-22,100,a\n\n" +
		"k2,2010,HISTORICAL_IMPORT,R-22,120.5,\n" +
		"k3,2010,ENTRY_TYPE_QPS,methyl bromide,.5,\"quoted, note\"\n"
	es, lines, errs := readEntries(strings.NewReader(good))
	if len(errs) != 0 || len(es) != 3 {
		t.Fatalf("good file: entries %v errors %v", es, errs)
	}
	if lines[0] != 3 || lines[1] != 5 || lines[2] != 6 {
		t.Errorf("line numbers %v, want 3 5 6 (comment and blank lines counted)", lines)
	}
	if es[1].GetMetricTonnes() != "120.5" || es[2].GetEntryType() != halovetv1.EntryType_ENTRY_TYPE_QPS || es[2].GetNote() != "quoted, note" {
		t.Errorf("parsed %v", es)
	}

	bad := "entry_key,year,entry_type,substance,metric_tonnes\n" +
		"k1,2009,historical-import,HCFC-22,100\n" + // line 2 fine
		"k1,2009,production,HCFC-22,1\n" + // line 3 duplicate key
		"k3,1970,production,HCFC-22,1\n" + // line 4 year
		"k4,2009,stockpile,HCFC-22,1\n" + // line 5 type
		"k5,2009,production,HCFC-22,\"1,000\"\n" + // line 6 thousands separator
		"k6,2009,production,HCFC-22,-1\n" + // line 7 negative
		"k7,2009,production\n" + // line 8 field count
		"k8,2009,production,,1\n" // line 9 substance
	_, _, errs = readEntries(strings.NewReader(bad))
	want := map[int]string{3: "also on line 2", 4: "1970", 5: "stockpile", 6: "1,000", 7: "-1", 8: "fields", 9: "substance is empty"}
	got := map[int]string{}
	for _, e := range errs {
		got[e.line] = e.msg
	}
	for line, w := range want {
		if !strings.Contains(got[line], w) {
			t.Errorf("line %d: %q, want a message with %q", line, got[line], w)
		}
	}
	if len(errs) != len(want) {
		t.Errorf("%d problems %v, want %d", len(errs), errs, len(want))
	}
	_, _, errs = readEntries(strings.NewReader("entry_key,year,substance\n"))
	if len(errs) == 0 || !strings.Contains(errs[0].msg, "required column") {
		t.Errorf("missing columns: %v", errs)
	}
}

// FuzzReadEntries: any input either gives problems with line numbers or entries that
// satisfy the file's rules; it never panics.
func FuzzReadEntries(f *testing.F) {
	f.Add("entry_key,year,entry_type,substance,metric_tonnes,note\nk1,2009,historical-import,HCFC-22,100,a\n")
	f.Add("# c\nentry_key,year,entry_type,substance,metric_tonnes\nk,2010,qps,methyl bromide,.5\nk,2010,qps,x,1\n")
	f.Add("metric_tonnes,substance,year,entry_type,entry_key\n1e3,HCFC-22,2009,production,k\n")
	f.Add("entry_key,year\n\"unclosed,2009\n")
	f.Add("")
	f.Fuzz(func(t *testing.T, in string) {
		es, lines, errs := readEntries(strings.NewReader(in))
		if len(errs) > maxEntryLineErrors {
			t.Fatalf("%d problems, more than the bound %d", len(errs), maxEntryLineErrors)
		}
		for _, e := range errs {
			if e.line < 1 || e.msg == "" {
				t.Fatalf("problem without a line or a message: %+v", e)
			}
		}
		if len(lines) != len(es) {
			t.Fatalf("%d entries with %d line numbers", len(es), len(lines))
		}
		keys := map[string]bool{}
		for i, e := range es {
			if e.GetEntryKey() == "" || keys[e.GetEntryKey()] || e.GetYear() < 1986 || e.GetYear() > 2100 ||
				e.GetEntryType() == halovetv1.EntryType_ENTRY_TYPE_UNSPECIFIED || e.GetSubstance() == "" ||
				!plainDecimal.MatchString(e.GetMetricTonnes()) || wireDec(e.GetMetricTonnes()).Sign() < 0 {
				t.Fatalf("entry %d breaks the file's rules: %v", i, e)
			}
			keys[e.GetEntryKey()] = true
			if i > 0 && lines[i] <= lines[i-1] {
				t.Fatalf("line numbers not increasing: %v", lines)
			}
		}
	})
}
