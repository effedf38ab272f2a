package main

import (
	"fmt"
	"slices"
	"strings"

	"sluice/validation"
)

// strictFailure is validate --strict's verdict: an error naming the
// checks that failed (the exit is non-zero), or nil when none failed.
func strictFailure(checks []validation.Check) error {
	var names []string
	n := 0
	for _, c := range checks {
		if c.Status != validation.Fail {
			continue
		}
		n++
		if !slices.Contains(names, c.Name) {
			names = append(names, c.Name)
		}
	}
	if n == 0 {
		return nil
	}
	list := names
	if len(list) > 4 {
		list = append(slices.Clone(names[:4]), fmt.Sprintf("and %d more", len(names)-4))
	}
	what := "checks"
	if n == 1 {
		what = "check"
	}
	return withHint(fmt.Errorf("%d %s failed (--strict): %s", n, what, strings.Join(list, ", ")),
		"the evidence above says what each failure means; without --strict, validate reports and exits 0")
}
