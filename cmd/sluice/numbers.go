package main

import (
	"math"
	"strconv"
	"strings"

	"sluice/internal/words"
)

// plain writes x for people with sig significant digits and never in
// scientific notation: 18,130 rather than 1.813e+04, 0.00012 rather than
// 1.2e-04; thousands separated from 10,000 up.
func plain(x float64, sig int) string {
	switch {
	case math.IsNaN(x):
		return "n/a"
	case math.IsInf(x, 0) || x == 0:
		return words.Thousands(x)
	}
	r, err := strconv.ParseFloat(strconv.FormatFloat(x, 'g', sig, 64), 64)
	if err != nil {
		return words.Thousands(x)
	}
	if math.Abs(r) >= 1e4 {
		return words.Thousands(r)
	}
	s := strconv.FormatFloat(r, 'f', -1, 64)
	if strings.Contains(s, "e") { // not reached for finite r below 1e21
		return words.Thousands(r)
	}
	return s
}

// csvNumber writes a number for a spreadsheet: plain decimals with at most
// the given places, no thousands separator, never scientific notation.
func csvNumber(x float64, places int) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return ""
	}
	s := strconv.FormatFloat(x, 'f', places, 64)
	if strings.Contains(s, ".") {
		s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	}
	if s == "-0" {
		s = "0"
	}
	return s
}
