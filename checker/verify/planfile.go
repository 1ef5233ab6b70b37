package verify

// DevPlanFileDiffers: the plan file present is not the file the record
// names by its SHA-256 (inputs.plan_file_sha256), the plan's canonical
// hash is unchanged, and the record is not signed (or its signature does
// not hold). A deviation, not informational: on an unsigned record the
// recorded file hash is covered only by a content hash anyone can
// recompute, so it may be the edit itself. On a record whose signature
// holds the same finding is DevPlanReformatted (informational).
const DevPlanFileDiffers DeviationCode = "plan-file-differs"

// UnsignedNotice is what verify says of every unsigned record: what the
// re-run checks, and what rests on the record alone.
const UnsignedNotice = "not signed: its content hash shows only that the record is consistent with itself (anyone can recompute it); the run time (run_at) and the tool identity (tool) rest on the record alone: they are outside what a re-run can check, and nothing shows when the run was made, by which furrow build, nor by whom"

// signedValid reports whether s is a signature that holds.
func signedValid(s *SignatureInfo) bool { return s != nil && s.Signed && s.Valid }
