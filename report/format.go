package report

import (
	"math"
	"strconv"
	"strings"
)

// money formats an amount of currency as whole units with thousands
// separators ("-12,345"); finance reads plain numbers, and the brief never
// shows more precision than the model has.
func money(x float64) string {
	switch {
	case math.IsNaN(x):
		return "n/a"
	case math.IsInf(x, 1):
		return "unbounded"
	case math.IsInf(x, -1):
		return "-unbounded"
	}
	r := math.Round(x)
	if r == 0 {
		return "0" // no "-0"
	}
	s := strconv.FormatFloat(math.Abs(r), 'f', 0, 64)
	var b strings.Builder
	if r < 0 {
		b.WriteByte('-')
	}
	for i, c := range s {
		if i > 0 && (len(s)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(c)
	}
	return b.String()
}

// approx is money rounded to three significant digits ("242,000"), for
// figures read off a curve, where more digits would claim false precision.
func approx(x float64) string {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return money(x)
	}
	e := math.Pow(10, math.Floor(math.Log10(math.Abs(x)))-2)
	return money(math.Round(x/e) * e)
}

// signedMoney is money with an explicit "+" on gains.
func signedMoney(x float64) string {
	s := money(x)
	if math.Round(x) > 0 {
		return "+" + s
	}
	return s
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

// percentileName names a quantile level: 0.05 → "5th percentile".
func percentileName(level float64) string {
	v := level * 100
	s := strings.TrimSuffix(strconv.FormatFloat(v, 'f', 1, 64), ".0")
	suffix := "th"
	if v == math.Trunc(v) {
		switch n := int(v); {
		case n%100 >= 11 && n%100 <= 13:
		case n%10 == 1:
			suffix = "st"
		case n%10 == 2:
			suffix = "nd"
		case n%10 == 3:
			suffix = "rd"
		}
	}
	return s + suffix + " percentile"
}

// joinAnd joins words as "a", "a and b", "a, b and c".
func joinAnd(w []string) string {
	switch len(w) {
	case 0:
		return ""
	case 1:
		return w[0]
	}
	return strings.Join(w[:len(w)-1], ", ") + " and " + w[len(w)-1]
}

// plural returns "1 week" or "13 weeks".
func plural(n int, one, many string) string {
	if n == 1 {
		return "1 " + one
	}
	return strconv.Itoa(n) + " " + many
}
