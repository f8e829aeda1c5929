package validate

import (
	"errors"
	"fmt"
	"strings"
	"time"
)

// ErrDate is wrapped by every date parsing error.
var ErrDate = errors.New("invalid date")

// ParseDate reads an ISO 8601 calendar date in extended form, "YYYY-MM-DD", and returns
// midnight UTC of that day. Surrounding spaces are ignored; times, week dates, ordinal dates
// and the basic form without hyphens are refused with a message saying what is accepted.
func ParseDate(s string) (time.Time, error) {
	t := strings.TrimSpace(s)
	if t == "" {
		return time.Time{}, fmt.Errorf("%w: empty; accepted: YYYY-MM-DD, e.g. 2025-03-31", ErrDate)
	}
	if len(t) != 10 || t[4] != '-' || t[7] != '-' {
		return time.Time{}, fmt.Errorf("%w: %q; accepted: YYYY-MM-DD (ISO 8601), e.g. 2025-03-31", ErrDate, cutText(s))
	}
	y, ok1 := digitsValue(t[0:4])
	m, ok2 := digitsValue(t[5:7])
	d, ok3 := digitsValue(t[8:10])
	if !ok1 || !ok2 || !ok3 {
		return time.Time{}, fmt.Errorf("%w: %q; accepted: YYYY-MM-DD (ISO 8601) with digits only, e.g. 2025-03-31", ErrDate, cutText(s))
	}
	if y < 1900 {
		return time.Time{}, fmt.Errorf("%w: %q: year %d is before 1900", ErrDate, t, y)
	}
	if m < 1 || m > 12 {
		return time.Time{}, fmt.Errorf("%w: %q: month %d is not 01 to 12", ErrDate, t, m)
	}
	if d < 1 || d > daysIn(y, m) {
		return time.Time{}, fmt.Errorf("%w: %q: day %d does not exist in %04d-%02d (it has %d days)", ErrDate, t, d, y, m, daysIn(y, m))
	}
	return time.Date(y, time.Month(m), d, 0, 0, 0, 0, time.UTC), nil
}

func digitsValue(s string) (int, bool) {
	v := 0
	for i := 0; i < len(s); i++ {
		c := s[i]
		if c < '0' || c > '9' {
			return 0, false
		}
		v = v*10 + int(c-'0')
	}
	return v, true
}

// daysIn returns the number of days in month m of year y (proleptic Gregorian calendar).
func daysIn(y, m int) int {
	switch m {
	case 2:
		if y%4 == 0 && (y%100 != 0 || y%400 == 0) {
			return 29
		}
		return 28
	case 4, 6, 9, 11:
		return 30
	}
	return 31
}

// day truncates t to midnight UTC of its calendar day in UTC.
func day(t time.Time) time.Time {
	y, m, d := t.UTC().Date()
	return time.Date(y, m, d, 0, 0, 0, 0, time.UTC)
}

// isoDate formats a day as YYYY-MM-DD.
func isoDate(t time.Time) string { return t.UTC().Format(time.DateOnly) }
