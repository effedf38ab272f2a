// Package words formats figures for people: currency with thousands
// separators, percentile names, lists. The CLI, the gate's reasons and the
// brief share it so that a figure reads the same everywhere.
package words

import (
	"math"
	"strconv"
	"strings"
)

// Thousands formats x rounded to a whole unit with thousands separators
// ("-12,345"); never "-0"; NaN is "n/a" and infinities "unbounded".
func Thousands(x float64) string {
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
		return "0"
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

// Signed is Thousands with an explicit "+" on positive amounts.
func Signed(x float64) string {
	if math.Round(x) > 0 {
		return "+" + Thousands(x)
	}
	return Thousands(x)
}

// Percentile names a quantile level: 0.05 → "5th percentile".
func Percentile(level float64) string {
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

// JoinAnd joins words as "a", "a and b", "a, b and c".
func JoinAnd(w []string) string {
	switch len(w) {
	case 0:
		return ""
	case 1:
		return w[0]
	}
	return strings.Join(w[:len(w)-1], ", ") + " and " + w[len(w)-1]
}
