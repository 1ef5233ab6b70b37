// Package record holds the record of a run: the result types and their
// enums ([Result]), the audit file's canonical encoding, integrity hash and
// schema check ([EncodeRecord], [Seal], [WriteRecord]), ed25519 signing,
// the plan registration chain ([Register]) and atomic file writing.
package record
