// Package record holds the record of a run: the result types and their
// enums ([Result]), the audit file's canonical encoding, integrity hash and
// schema check ([EncodeRecord], [Seal], [WriteRecord]), ed25519 signing,
// the plan registration chain ([Register]), the run folder ([WriteRun])
// and atomic file writing.
//
// # Run folder
//
// A run folder holds the record audit.json and the files rendered from it:
// report.html, report.md and tables/*.csv. [WriteRun] writes it whole or
// not at all (into a folder beside it, renamed into place when complete).
//
// The record covers the whole folder: its "files" member lists every
// other file of the folder with the SHA-256 of its bytes, inside the
// content hash (and so under the signature), and verify checks each file
// against it and reports any file that is not listed. An edited report
// ("accepted" changed to "REJECTED") is therefore caught like an edited
// record.
//
// The hashes run one way only, from the record to the files. The reports
// are rendered first, from the record before it is sealed, and the record
// is sealed after their hashes are in it; so no report may show the
// record's content hash (the HTML footer used to), nor its list of files:
// a file cannot contain a hash of a record that contains its own hash.
// Instead the report says that audit.json lists its hash. A reader holding
// only a report ties it to a record by its SHA-256, which the record
// lists; the record is tied to its content by the content hash and, when
// signed, to the signer's key.
package record
