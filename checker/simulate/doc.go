// Package simulate runs a plan's cascades on data sets simulated from its
// declared design, before any data exist, and tallies how often each step
// is reported, each check is not met and each comparison is rejected
// ([Simulate]). The text form of the results is in [furrow/checker/render].
package simulate
