package words

import "testing"

// Expected strings follow the conventions of English number writing
// (common practice, no source).
func TestFormats(t *testing.T) {
	cases := []struct{ got, want string }{
		{Thousands(1234567.4), "1,234,567"},
		{Thousands(-999.5), "-1,000"},
		{Thousands(-0.3), "0"},
		{Thousands(12), "12"},
		{Signed(16840), "+16,840"},
		{Signed(-5), "-5"},
		{Percentile(0.05), "5th percentile"},
		{Percentile(0.01), "1st percentile"},
		{Percentile(0.12), "12th percentile"},
		{Percentile(0.22), "22nd percentile"},
		{Percentile(0.025), "2.5th percentile"},
		{JoinAnd([]string{"a", "b", "c"}), "a, b and c"},
		{JoinAnd([]string{"a"}), "a"},
	}
	for _, c := range cases {
		if c.got != c.want {
			t.Errorf("got %q, want %q", c.got, c.want)
		}
	}
}
