package checker

import (
	"crypto/ed25519"
	"io"

	"furrow/checker/engine"
	"furrow/checker/record"
	"furrow/checker/verify"
	"furrow/plan"
)

// Result is the record of one run; see [record.Result].
type Result = record.Result

// ToolInfo names the tool and version that made a record; see
// [record.ToolInfo].
type ToolInfo = record.ToolInfo

// RunOptions are the inputs of Run; see [engine.RunOptions].
type RunOptions = engine.RunOptions

// PlanError is Run's error for a plan with errors; see [engine.PlanError].
type PlanError = engine.PlanError

// DataError is Run's error for data that break the plan's contract; see
// [engine.DataError].
type DataError = engine.DataError

// Registration is a plan's registration file; see [record.Registration].
type Registration = record.Registration

// RegisterOptions are the inputs of Register; see [record.RegisterOptions].
type RegisterOptions = record.RegisterOptions

// RegisterResult is what Register wrote; see [record.RegisterResult].
type RegisterResult = record.RegisterResult

// AuditFileName is the name of the record inside a run directory.
const AuditFileName = record.AuditFileName

// MaxKeySize is the largest key file furrow reads; see [record.MaxKeySize].
const MaxKeySize = record.MaxKeySize

// ErrNotRegistered is Run's error for a plan that does not match its
// registration; see [engine.ErrNotRegistered].
var ErrNotRegistered = engine.ErrNotRegistered

// ErrPlanDoesNotLint is Register's error for a plan with errors; see
// [record.ErrPlanDoesNotLint].
var ErrPlanDoesNotLint = record.ErrPlanDoesNotLint

// Run reads the plan and its data, runs every endpoint's cascade and
// returns the record; see [engine.Run].
func Run(opt RunOptions) (*Result, error) { return engine.Run(opt) }

// Register appends an entry for the plan to its registration file; see
// [record.Register].
func Register(planPath string, opt RegisterOptions) (*RegisterResult, plan.Diagnostics, error) {
	return record.Register(planPath, opt)
}

// ReadRegistration reads a registration file; see [record.ReadRegistration].
func ReadRegistration(path string) (*Registration, []byte, error) {
	return record.ReadRegistration(path)
}

// GenerateKey makes a signing key pair in text form; see
// [record.GenerateKey].
func GenerateKey(r io.Reader) (public, private string, err error) { return record.GenerateKey(r) }

// ParsePublicKey parses a public key in text form; see
// [record.ParsePublicKey].
func ParsePublicKey(text string) (ed25519.PublicKey, error) { return record.ParsePublicKey(text) }

// ParsePrivateKey parses a private key in text form; see
// [record.ParsePrivateKey].
func ParsePrivateKey(text string) (ed25519.PrivateKey, error) { return record.ParsePrivateKey(text) }

// VerifyOptions are the inputs of Verify; see [verify.VerifyOptions].
type VerifyOptions = verify.VerifyOptions

// VerifyReport is what Verify found; see [verify.VerifyReport].
type VerifyReport = verify.VerifyReport

// SignatureInfo says whether a record is signed and by which key; see
// [verify.SignatureInfo].
type SignatureInfo = verify.SignatureInfo

// ReadPrivateKeyFile reads a private key file, refusing one that others
// may read; see [record.ReadPrivateKeyFile].
func ReadPrivateKeyFile(path string) (ed25519.PrivateKey, error) {
	return record.ReadPrivateKeyFile(path)
}

// KeyModeError is ReadPrivateKeyFile's error for a key file that others
// may read; see [record.KeyModeError].
type KeyModeError = record.KeyModeError

// Fingerprint names a public key briefly; see [record.Fingerprint].
func Fingerprint(pub ed25519.PublicKey) string { return record.Fingerprint(pub) }

// MissingInputError is Verify's error when the plan or the data are not
// where the record puts them; see [verify.MissingInputError].
type MissingInputError = verify.MissingInputError

// Deviation is one difference Verify found; see [verify.Deviation].
type Deviation = verify.Deviation

// DeviationCode names the kind of a Deviation; see [verify.DeviationCode].
type DeviationCode = verify.DeviationCode

// The deviation codes; see [verify.DeviationCode].
const (
	DevRecordEdited       = verify.DevRecordEdited
	DevReportEdited       = verify.DevReportEdited
	DevPlanChanged        = verify.DevPlanChanged
	DevAmendmentAfterLock = verify.DevAmendmentAfterLock
	DevDataChanged        = verify.DevDataChanged
	DevUnregisteredRun    = verify.DevUnregisteredRun
	DevStepNotDeclared    = verify.DevStepNotDeclared
	DevResultsDiffer      = verify.DevResultsDiffer
	DevToolVersion        = verify.DevToolVersion
	DevDataNotDeclared    = verify.DevDataNotDeclared
	DevPlanReformatted    = verify.DevPlanReformatted
	DevAmendmentUnchecked = verify.DevAmendmentUnchecked
	DevPlanFileDiffers    = verify.DevPlanFileDiffers
)

// UnsignedNotice is what verify says of an unsigned record; see
// [verify.UnsignedNotice].
const UnsignedNotice = verify.UnsignedNotice

// Verify re-runs the analysis of a record and compares; see
// [verify.Verify].
func Verify(opt VerifyOptions) (*VerifyReport, error) { return verify.Verify(opt) }
