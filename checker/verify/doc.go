// Package verify checks a run directory against the plan, the
// registration and the data: it validates the record's integrity and
// signature, re-runs the analysis with [furrow/checker/engine] and reports
// every difference as a [Deviation] ([Verify]).
package verify
