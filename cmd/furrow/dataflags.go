package main

import (
	"errors"
	"flag"
	"fmt"
	"math"
	"strconv"
	"strings"

	"furrow/checker"
)

// Flags that bound the reading of data files (check, run, verify).
const (
	flagMaxDataSize      = "max-data-size"      // largest data file read
	flagAllowOutsideData = "allow-outside-data" // the plan's data.file may lie outside its folder
	flagMaxUnpackRatio   = "max-unpack-ratio"   // how far a workbook part may unpack
)

// maxDataSizeHelp and allowOutsideDataHelp document the two flags in
// the help of check and run (text at column 19, as their other flags);
// verify's help writes --max-data-size at its own column.
const (
	maxDataSizeHelp = `  --max-data-size SIZE
                   largest data file read, and for a workbook the most
                   unpacked from it: bytes, or a number with kB, MB, GB
                   (powers of 1000) or KiB, MiB, GiB (powers of 1024);
                   default 2GiB
  --max-unpack-ratio N
                   how many times its packed size a workbook part of
                   more than 10 MiB may unpack to before it is refused
                   as a zip bomb; default 100`
	allowOutsideDataHelp = `  --allow-outside-data
                   read the plan's data.file even when it lies (after
                   symbolic links) outside the plan's folder; without it
                   such a plan is refused. DATA given on the command line
                   is read wherever it is`
)

// dataFlags are the values of the data-reading flags of one command.
type dataFlags struct {
	maxSize      sizeValue
	unpackRatio  *int
	allowOutside *bool
}

// addDataFlags defines --max-data-size, and --allow-outside-data when
// outside is true, on fs.
func addDataFlags(fs *flag.FlagSet, outside bool) *dataFlags {
	d := &dataFlags{maxSize: sizeValue(checker.DefaultMaxDataSize)}
	fs.Var(&d.maxSize, flagMaxDataSize, "")
	d.unpackRatio = fs.Int(flagMaxUnpackRatio, checker.DefaultMaxUnpackRatio, "")
	if outside {
		d.allowOutside = fs.Bool(flagAllowOutsideData, false, "")
	}
	return d
}

// options returns the flags as the checker takes them.
func (d *dataFlags) options() checker.DataOptions {
	o := checker.DataOptions{MaxSize: int64(d.maxSize)}
	if d.unpackRatio != nil && *d.unpackRatio > 0 {
		o.MaxUnpackRatio = *d.unpackRatio
	}
	if d.allowOutside != nil {
		o.AllowOutside = *d.allowOutside
	}
	return o
}

// sizeValue is a byte count given as "2GiB", "500MB" or "1048576".
type sizeValue int64

// String writes the size in bytes.
func (s *sizeValue) String() string { return strconv.FormatInt(int64(*s), 10) }

// Set parses a size: digits with an optional decimal part and an optional
// unit (B, kB, MB, GB, TB, KiB, MiB, GiB, TiB; case ignored); at least 1
// byte.
func (s *sizeValue) Set(text string) error {
	n, err := parseSize(text)
	if err != nil {
		return err
	}
	*s = sizeValue(n)
	return nil
}

var sizeUnits = map[string]float64{
	"": 1, "b": 1,
	"k": 1e3, "kb": 1e3, "m": 1e6, "mb": 1e6, "g": 1e9, "gb": 1e9, "t": 1e12, "tb": 1e12,
	"kib": 1 << 10, "mib": 1 << 20, "gib": 1 << 30, "tib": 1 << 40,
}

// parseSize reads a size for --max-data-size.
func parseSize(text string) (int64, error) {
	t := strings.TrimSpace(text)
	i := 0
	for i < len(t) && (t[i] >= '0' && t[i] <= '9' || t[i] == '.') {
		i++
	}
	num, unit := t[:i], strings.ToLower(strings.TrimSpace(t[i:]))
	mult, ok := sizeUnits[unit]
	v, err := strconv.ParseFloat(num, 64)
	if !ok || err != nil || num == "" {
		return 0, fmt.Errorf("%q is not a size; give bytes, or a number with kB, MB, GB, KiB, MiB or GiB (e.g. 4GiB)", text)
	}
	v *= mult
	if v < 1 || v >= math.MaxInt64 {
		return 0, fmt.Errorf("%q is not a size of at least 1 byte", text)
	}
	return int64(v), nil
}

// hint adds to an error the flag that lifts it, when there is one.
func hint(err error) error {
	var se *checker.SizeError
	var oe *checker.OutsideError
	var re *checker.UnpackRatioError
	switch {
	case errors.As(err, &re):
		return fmt.Errorf("%w; if the workbook is yours, give --%s larger than %d (now %d) to read it", err, flagMaxUnpackRatio, re.Size/max(re.Packed, 1), re.Limit)
	case errors.As(err, &se):
		return fmt.Errorf("%w; give a larger --%s to read it", err, flagMaxDataSize)
	case errors.As(err, &oe):
		return fmt.Errorf("%w (--%s)", err, flagAllowOutsideData)
	}
	return err
}
