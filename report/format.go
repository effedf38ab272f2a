package report

import (
	"math"
	"strconv"
	"strings"

	"sluice/internal/words"
)

// money formats an amount of currency as whole units with thousands
// separators ("-12,345"); finance reads plain numbers, and the brief never
// shows more precision than the model has.
func money(x float64) string { return words.Thousands(x) }

// approx is money rounded to three significant digits ("242,000"), for
// figures read off a curve, where more digits would claim false precision.
func approx(x float64) string {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return money(x)
	}
	e := math.Pow(10, math.Floor(math.Log10(math.Abs(x)))-2)
	return money(math.Round(x/e) * e)
}

// pct formats a share as a percentage with one decimal at most.
func pct(p float64) string {
	if math.IsNaN(p) {
		return "n/a"
	}
	s := strconv.FormatFloat(p*100, 'f', 1, 64)
	s = strings.TrimSuffix(s, ".0")
	if s == "-0" {
		s = "0"
	}
	return s + "%"
}

// compact formats an axis tick: 0, 950, 20k, 1.5M, 2B.
func compact(x float64) string {
	a := math.Abs(x)
	unit, div := "", 1.0
	switch {
	case a >= 1e9:
		unit, div = "B", 1e9
	case a >= 1e6:
		unit, div = "M", 1e6
	case a >= 1e3:
		unit, div = "k", 1e3
	}
	s := strconv.FormatFloat(x/div, 'f', 2, 64)
	s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	if s == "-0" {
		s = "0"
	}
	return s + unit
}

// plural returns "1 week" or "13 weeks".
func plural(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return strconv.Itoa(n) + " " + many
}

func signedMoney(x float64) string        { return words.Signed(x) }
func percentileName(level float64) string { return words.Percentile(level) }
func joinAnd(w []string) string           { return words.JoinAnd(w) }
