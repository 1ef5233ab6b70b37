package record

import "flag"

// update is accepted, and ignored, so that go test ./checker/... -args
// -update (which regenerates the golden files of checker/contract and
// checker/render) also runs this package's tests: it has no golden files.
var _ = flag.Bool("update", false, "ignored: this package has no golden files")
