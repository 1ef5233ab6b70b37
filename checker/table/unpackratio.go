package table

import (
	"fmt"

	"furrow/plan"
)

// DefaultMaxUnpackRatio is how many times its packed size a large part of
// an XLSX workbook may unpack to when Options give no other limit: a sheet
// written by a spreadsheet program unpacks to 5 to 20 times its packed
// size, a zip bomb to a thousand times and more.
const DefaultMaxUnpackRatio = 100

// unpackRatio is Options.MaxUnpackRatio, or its default.
func (o Options) unpackRatio() int64 {
	if o.MaxUnpackRatio > 0 {
		return int64(o.MaxUnpackRatio)
	}
	return DefaultMaxUnpackRatio
}

// UnpackRatioError is returned by ReadTable for an XLSX workbook with a
// part of more than 10 MiB that unpacks to more than the unpack ratio
// limit (Options.MaxUnpackRatio) times its packed size.
type UnpackRatioError struct {
	// Path is the data file as a slash path.
	Path string
	// Part is the workbook part.
	Part string
	// Size and Packed are the part's unpacked and packed sizes in bytes,
	// as the archive declares them.
	Size, Packed int64
	// Limit is the ratio limit that applied.
	Limit int
}

// Error names the file, the part, its sizes and the ratio limit.
func (e *UnpackRatioError) Error() string {
	return fmt.Sprintf("reading data %s: the workbook part %s unpacks to %s from %s, more than %d times its packed size (the unpack ratio limit); that is a zip bomb, not a workbook a spreadsheet program writes (open it in one and save it again if it is yours)",
		e.Path, e.Part, plan.ByteSize(e.Size), plan.ByteSize(e.Packed), e.Limit)
}
