package table

import (
	"errors"
	"strings"
	"testing"
)

// TestUnpackRatioLimit: a part that unpacks to more than 100 times its
// packed size is refused with an *UnpackRatioError that names the limit;
// Options.MaxUnpackRatio raises the limit, and the same workbook is then
// not refused for its ratio.
func TestUnpackRatioLimit(t *testing.T) {
	parts := map[string]string{"xl/worksheets/sheet1.xml": sheetXML(rawHeader, strings.Repeat("<x/>"+strings.Repeat(" ", 1000), 11<<10))}
	data := rawXLSX(t, parts)
	_, _, err := readRawXLSX(t, data, Options{})
	var re *UnpackRatioError
	if !errors.As(err, &re) {
		t.Fatalf("default limit: error %v, want an *UnpackRatioError", err)
	}
	if re.Limit != DefaultMaxUnpackRatio || re.Size <= int64(re.Limit)*re.Packed {
		t.Errorf("error fields %+v: want limit %d and a size over limit x packed", re, DefaultMaxUnpackRatio)
	}
	if msg := err.Error(); !strings.Contains(msg, "more than 100 times its packed size (the unpack ratio limit)") {
		t.Errorf("message %q does not name the limit", msg)
	}
	ratio := int(re.Size/re.Packed) + 1
	_, _, err = readRawXLSX(t, data, Options{MaxUnpackRatio: ratio})
	if errors.As(err, &re) {
		t.Errorf("limit %d: still refused for its ratio: %v", ratio, err)
	}
	// Just below the part's ratio, it is refused again, naming that limit.
	_, _, err = readRawXLSX(t, data, Options{MaxUnpackRatio: ratio - 1})
	if !errors.As(err, &re) || re.Limit != ratio-1 {
		t.Errorf("limit %d: error %v, want an *UnpackRatioError with that limit", ratio-1, err)
	}
}
