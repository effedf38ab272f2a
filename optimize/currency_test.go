package optimize

import (
	"strings"
	"testing"
)

// TestPlanCurrency: currency is a label for people; a plan without one
// names none, and a value that is no short label is refused with its
// position (the plan's other keys are checked the same way).
func TestPlanCurrency(t *testing.T) {
	for _, tt := range []struct {
		src, want, err string
	}{
		{"horizon_weeks: 13\n", "", ""},
		{"currency: EUR\n", "EUR", ""},
		{"currency: \" GBP \"\n", "GBP", ""},
		{"currency: \"\"\n", "", "plan.yaml:1:"},
		{"currency: \"<b>EUR</b>\"\n", "", "currency"},
		{"currency: [EUR]\n", "", "plan.yaml:1:"},
	} {
		p, err := ParsePlan([]byte(tt.src), "plan.yaml")
		switch {
		case tt.err != "" && (err == nil || !strings.Contains(err.Error(), tt.err)):
			t.Errorf("%q: err = %v, want one containing %q", tt.src, err, tt.err)
		case tt.err == "" && err != nil:
			t.Errorf("%q: %v", tt.src, err)
		case tt.err == "" && p.Currency != tt.want:
			t.Errorf("%q: currency %q, want %q", tt.src, p.Currency, tt.want)
		}
	}
}
