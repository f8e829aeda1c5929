package validate

import (
	"errors"
	"strings"
	"testing"
	"time"
)

func TestParseDate(t *testing.T) {
	good := map[string]time.Time{
		"2024-02-29":   time.Date(2024, 2, 29, 0, 0, 0, 0, time.UTC), // leap year
		"2000-02-29":   time.Date(2000, 2, 29, 0, 0, 0, 0, time.UTC), // divisible by 400
		" 2025-03-31 ": time.Date(2025, 3, 31, 0, 0, 0, 0, time.UTC),
		"1990-01-01":   time.Date(1990, 1, 1, 0, 0, 0, 0, time.UTC),
	}
	for in, want := range good {
		got, err := ParseDate(in)
		if err != nil || !got.Equal(want) {
			t.Errorf("ParseDate(%q) = %v, %v; want %v", in, got, err, want)
		}
	}
	bad := map[string]string{
		"":                     "empty",
		"2023-02-29":           "does not exist",
		"1900-02-29":           "does not exist", // 1900 is not a leap year
		"2024-04-31":           "does not exist",
		"2024-13-01":           "month 13",
		"2024-00-10":           "month 0",
		"2024-01-00":           "day 0",
		"24-01-01":             "YYYY-MM-DD",
		"2024/01/01":           "YYYY-MM-DD",
		"20240101":             "YYYY-MM-DD",
		"2024-1-1":             "YYYY-MM-DD",
		"2024-01-01T10:00:00Z": "YYYY-MM-DD",
		"2024-0a-01":           "digits only",
		"1899-12-31":           "before 1900",
		"01/02/2024":           "YYYY-MM-DD",
	}
	for in, msg := range bad {
		_, err := ParseDate(in)
		if !errors.Is(err, ErrDate) || !strings.Contains(err.Error(), msg) {
			t.Errorf("ParseDate(%q) error = %v; want ErrDate saying %q", in, err, msg)
		}
	}
}

func FuzzParseDate(f *testing.F) {
	for _, s := range []string{"2024-02-29", "2023-02-29", "9999-12-31", "0000-00-00", "2024-1-1"} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		d, err := ParseDate(s)
		if err != nil {
			return
		}
		if got := isoDate(d); got != strings.TrimSpace(s) {
			t.Fatalf("ParseDate(%q) = %s; a valid date must format back to its text", s, got)
		}
	})
}
