package main

// writeBrief writes DIR/report.html for a decision; signed lists the roles
// that have signed. It returns the path written ("" when none).
func writeBrief(dir string, run *decisionRun, signed []string) (string, error) {
	return "", nil
}
