package store_test

import "github.com/halovet/halovet/exact"

// num is a figure written in a test as a decimal literal, exactly.
func num(s string) exact.Decimal { return exact.MustParse(s) }
