package table

import (
	"fmt"
	"path/filepath"
	"strings"

	"furrow/plan"
)

// DefaultMaxSize is the largest data file, in bytes, that ReadTable reads
// when Options give no limit: 2 GiB. For an XLSX workbook the limit also
// bounds each part unpacked from it, and their sum.
const DefaultMaxSize int64 = 2 << 30

// Options say how far ReadTableWith reaches. The zero value is the
// default: files up to DefaultMaxSize, and the plan's data.file only
// inside the plan's folder.
type Options struct {
	// MaxSize is the largest data file read, in bytes (0: DefaultMaxSize).
	// For an XLSX workbook it also bounds what is unpacked from it.
	MaxSize int64
	// AllowOutside lets the plan's data.file resolve (after symbolic
	// links) to a file outside the plan's folder. A data path given to
	// ReadTableWith is read wherever it is.
	AllowOutside bool
	// MaxUnpackRatio is how many times its packed size a part of more
	// than 10 MiB of an XLSX workbook may unpack to before it is refused
	// as a zip bomb (0: DefaultMaxUnpackRatio).
	MaxUnpackRatio int
}

func (o Options) maxSize() int64 {
	if o.MaxSize > 0 {
		return o.MaxSize
	}
	return DefaultMaxSize
}

// SizeError is returned by ReadTable for a data file, or a part of an
// XLSX workbook, over the size limit (Options.MaxSize).
type SizeError struct {
	// Path is the data file as a slash path.
	Path string
	// Part is the workbook part that unpacks to more than the limit ("" for
	// the file itself).
	Part string
	// Size is the size found in bytes; -1 when the file grew past the
	// limit while it was read.
	Size int64
	// Limit is the limit in bytes.
	Limit int64
	// Together is true when Part alone is within the limit but the parts
	// read so far, Part included, unpack to Size together.
	Together bool
}

// Error names the file, its size and the limit.
func (e *SizeError) Error() string {
	switch {
	case e.Part != "" && e.Together:
		return fmt.Sprintf("reading data %s: with the workbook part %s, the parts read unpack to %s, over the limit of %s on data",
			e.Path, e.Part, plan.ByteSize(e.Size), plan.ByteSize(e.Limit))
	case e.Part != "":
		return fmt.Sprintf("reading data %s: the workbook part %s unpacks to %s, over the limit of %s on data",
			e.Path, e.Part, plan.ByteSize(e.Size), plan.ByteSize(e.Limit))
	case e.Size < 0:
		return fmt.Sprintf("reading data %s: the file grew past the limit of %s on data files while it was read", e.Path, plan.ByteSize(e.Limit))
	}
	return fmt.Sprintf("reading data %s: the file is %s, over the limit of %s on data files", e.Path, plan.ByteSize(e.Size), plan.ByteSize(e.Limit))
}

// OutsideError is returned by ReadTable when the plan's data.file resolves,
// after symbolic links, to a file outside the plan's folder and
// Options.AllowOutside is false. Nothing is read from the file.
type OutsideError struct {
	// Pos is the position of data.file in the plan.
	Pos plan.Pos
	// File is data.file as the plan writes it.
	File string
	// Link is the file a symbolic link inside the folder leads to, as an
	// absolute slash path; "" when the name itself leads outside (an
	// absolute path elsewhere, or "..").
	Link string
}

// Error names the plan line, the path as written and where it leads.
func (e *OutsideError) Error() string {
	how := "lies outside the plan's folder"
	if e.Link != "" {
		how = fmt.Sprintf("is a link to %s, outside the plan's folder", e.Link)
	}
	where := ""
	if e.Pos.IsValid() {
		where = e.Pos.String() + ": "
	}
	return fmt.Sprintf("%sdata.file %q %s; a plan reads its data from its own folder: move the file there, or allow a data file outside it explicitly",
		where, e.File, how)
}

// resolveDataPath returns the file ReadTable reads: dataPath as given, or
// the plan's data.file relative to the plan's folder, which must resolve
// (after symbolic links) inside that folder unless o.AllowOutside.
func resolveDataPath(p *plan.Plan, dataPath string, o Options) (string, error) {
	if dataPath != "" {
		return filepath.Clean(dataPath), nil
	}
	if p.Data.File == "" {
		return "", fmt.Errorf("reading data: the plan names no data file and none was given")
	}
	dir := filepath.Dir(p.Path)
	path := filepath.FromSlash(p.Data.File)
	if !filepath.IsAbs(path) {
		path = filepath.Join(dir, path)
	}
	path = filepath.Clean(path)
	if o.AllowOutside {
		return path, nil
	}
	pos := p.Where["data.file"]
	if !pos.IsValid() {
		pos = p.Data.Pos
	}
	// First by name, then with the links of the folder and of the file
	// resolved; a file that does not exist is judged by its name (reading
	// it fails next), as is a folder that does not.
	if !inside(absolute(dir), absolute(path)) {
		return "", &OutsideError{Pos: pos, File: p.Data.File}
	}
	realDir, err := filepath.EvalSymlinks(absolute(dir))
	if err != nil {
		return path, nil
	}
	target, err := filepath.EvalSymlinks(absolute(path))
	if err != nil {
		return path, nil
	}
	if !inside(realDir, target) {
		return "", &OutsideError{Pos: pos, File: p.Data.File, Link: filepath.ToSlash(target)}
	}
	return path, nil
}

// inside reports whether path lies within dir (both absolute and clean);
// dir itself is inside.
func inside(dir, path string) bool {
	rel, err := filepath.Rel(dir, path)
	if err != nil || filepath.IsAbs(rel) {
		return false
	}
	return rel != ".." && !strings.HasPrefix(rel, ".."+string(filepath.Separator))
}

// absolute returns path made absolute and clean (as it is when that fails).
func absolute(path string) string {
	if a, err := filepath.Abs(path); err == nil {
		return a
	}
	return filepath.Clean(path)
}

// Padding bounds (tableBuilder.add): the blank cells that pad short rows
// to the width of the header may number at most padRatioCSV or
// padRatioXLSX per cell the file holds, once past minPadding. A cell the
// file holds costs bytes of the file; a padded one costs nothing, so a
// table that is mostly padding (a header far wider than its rows, as from
// a stray name in the last column of a sheet) would take memory out of
// all proportion to the file. A CSV row shorter than its header is an
// error anyway; a sheet leaves the trailing blank cells of a row out, so a
// sparse sheet pads more.
const (
	padRatioCSV  = 1
	padRatioXLSX = 8
	minPadding   = 1 << 20
)

// CellsError is returned by ReadTable when the rows of a file, padded to
// the width of its header, would make a table that is mostly padding.
type CellsError struct {
	// Path is the data file, Sheet the sheet read (XLSX only).
	Path, Sheet string
	// Row is the file row that passed the bound.
	Row int
	// Columns is the number of table columns (named header cells).
	Columns int
	// Held and Padded count the cells the rows hold and the blank ones
	// that pad them, up to Row; Ratio is the most padded per cell held.
	Held, Padded, Ratio int
}

// Error names the file, the row and the counts.
func (e *CellsError) Error() string {
	where := e.Path
	if e.Sheet != "" {
		where += ", sheet " + Quote(e.Sheet)
	}
	return fmt.Sprintf("reading data %s: by row %d the rows hold %d cells and %d blank ones pad them to the %d named columns of the header; a table that is mostly padding is refused (at most %d blank %s per cell held, once past %d): is the header row the one the data follow?",
		where, e.Row, e.Held, e.Padded, e.Columns, e.Ratio, Plural(e.Ratio, "cell", "cells"), minPadding)
}
