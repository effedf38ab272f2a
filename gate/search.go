package gate

// probe tests a step t: whether it passes, and its slack — a number that is
// continuous in t, at least 0 where t passes and below 0 where it fails. It
// guides the search; pass or fail alone decides. With quick set the probe
// may stop early on a certain failure and return an estimated slack.
type probe func(t float64, quick bool) (ok bool, slack float64)

// largestPassing returns the largest t in [0, top] for which the probe
// passes, when passing need not be monotone in t: it scans the grid top·i/n
// from i = n down to the first passing point, then narrows the bracket
// between that point and the failing grid point above it until it is at
// most tol wide. It returns the passing end t and the failing end fail of
// the final bracket (fail < 0 when t == top). t = 0 is taken to pass without
// a probe (no move is the status quo); if no point above 0 passes, t is 0.
//
// The bracket is narrowed by false position on the slack with the Illinois
// modification (an end kept twice has its slack halved), each point kept at
// least tol/2 inside the bracket; a step that fails to halve the bracket
// within two probes is followed by a bisection step. Every probe keeps a
// passing lower and a failing upper end, as bisection would.
//
// A pass region narrower than a grid step lying between two failing grid
// points is not seen; finer grids (Settings.GridSteps) see more.
func largestPassing(top float64, n int, tol float64, pass probe) (t, fail float64) {
	if top <= 0 {
		return 0, -1
	}
	// The full step is probed in full: its risk words the reasons.
	ok, s := pass(top, false)
	if ok {
		return top, -1
	}
	type end struct{ t, slack float64 }
	lo, hi := end{0, 0}, end{top, s}
	loKnown := false // the slack at t = 0 was not probed
	for i := n - 1; i >= 1; i-- {
		ti := top * float64(i) / float64(n)
		ok, s := pass(ti, true)
		if ok {
			lo, loKnown = end{ti, s}, true
			break
		}
		hi = end{ti, s}
	}
	kept := 0   // +1: lo was kept by the last probe, −1: hi was
	budget := 2 // false-position probes left before the bracket must halve
	mark := hi.t - lo.t
	for hi.t-lo.t > tol {
		width := hi.t - lo.t
		x := lo.t + width/2
		if budget > 0 && loKnown && lo.slack >= 0 && hi.slack < 0 {
			x = lo.t + width*lo.slack/(lo.slack-hi.slack)
			x = min(max(x, lo.t+tol/2), hi.t-tol/2)
			budget--
		}
		// Until a step passes there is nothing to interpolate from, and a
		// quick failure is enough.
		ok, s := pass(x, !loKnown)
		if ok {
			lo, loKnown = end{x, s}, true
			if kept == -1 {
				hi.slack /= 2
			}
			kept = -1
		} else {
			hi = end{x, s}
			if kept == +1 {
				lo.slack /= 2
			}
			kept = +1
		}
		if hi.t-lo.t <= mark/2 {
			mark, budget = hi.t-lo.t, 2
		}
	}
	return lo.t, hi.t
}
