package main

import (
	"flag"
	"io"
	"strings"
	"testing"

	"furrow/checker"
)

// TestUnpackRatioFlag: --max-unpack-ratio reaches the data options, and
// the error of a workbook part over the limit names the flag and a value
// that would read it.
func TestUnpackRatioFlag(t *testing.T) {
	fs := flag.NewFlagSet("x", flag.ContinueOnError)
	fs.SetOutput(io.Discard)
	d := addDataFlags(fs, false)
	if err := fs.Parse([]string{"--max-unpack-ratio", "400"}); err != nil {
		t.Fatal(err)
	}
	if got := d.options().MaxUnpackRatio; got != 400 {
		t.Errorf("MaxUnpackRatio = %d, want 400", got)
	}
	err := hint(&checker.UnpackRatioError{Path: "plots.xlsx", Part: "xl/worksheets/sheet1.xml", Size: 300 << 20, Packed: 1 << 20, Limit: 100})
	for _, want := range []string{"more than 100 times its packed size (the unpack ratio limit)", "give --max-unpack-ratio larger than 300 (now 100)"} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("error %q does not say %q", err, want)
		}
	}
}
