// Package plan reads, checks and fingerprints furrow statistical analysis
// plans (format 1).
//
// # Format
//
// A plan is one YAML document (UTF-8, at most [MaxSize] bytes, spaces for
// indentation) whose top-level keys are furrow (the format version, 1),
// trial, data, columns, design, exclusions and endpoints. The keys, their
// types, allowed values and defaults are defined by the JSON Schema
// schema/plan.schema.json (package furrow/schema), which is also the
// reference printed in README.md. In short:
//
//   - columns declare every data column with a role: response, treatment,
//     factor, unit (the experimental unit), repeat (time points), block,
//     site, covariate or label; factor roles may list levels, and a
//     treatment or factor may name its control level.
//   - each endpoint analyses one response by an ordered cascade of steps.
//     A step names a model (linear, mixed, welch or a rank test), the
//     outcome (raw values, or per unit: change, baseline, unit-mean), a
//     transform, its terms, and assumption checks; when a check's p-value
//     is below fail-below, the analysis moves to the step named by the
//     check's on-fail, else the step's on-fail. A step without on-fail is
//     the last resort.
//   - a term in fixed or random is a column name or a list of names: an
//     interaction for fixed terms, a nesting combination for random terms
//     ([site, block] is block within site).
//   - the transform applies to each measured value before the outcome is
//     derived (so change on the log scale is a log ratio).
//   - hypotheses (versus-control, pairwise, equivalence, non-inferiority,
//     term) are answered on the step the cascade accepts.
//
// Scalars that name things (ids, versions, levels, control) may be written
// as text or numbers; the text as written is used, so levels: [1, 2] and
// levels: ["1", "2"] mean the same. Anchors, aliases, merge keys, custom
// tags and duplicate keys are refused: a plan is read as written.
//
// # Loading
//
// [Load] reads a file and [Parse] reads bytes; both return the plan, the
// findings, and an error only when the file cannot be read. Loading runs
// these stages, stopping after the first that finds errors:
//
//  1. the bytes: size, UTF-8 without NUL bytes, no tabs in indentation;
//  2. YAML syntax, exactly one document, not empty;
//  3. the format version (furrow: 1; other versions are refused);
//  4. the JSON Schema, applied to the YAML tree converted to JSON values;
//     each problem is placed at the YAML line and column of the value (or
//     key) it concerns and worded in plain terms;
//  5. decoding into [Plan], recording the position of every value in
//     Plan.Where under its data path ("endpoints[0].steps[1].on-fail";
//     see [Plan.PosOf]), then filling defaults;
//  6. [Validate]: the semantic checks.
//
// The plan is nil when stage 1 to 4 found errors. Defaults filled at stage
// 5: data.format from the file extension (.xlsx: xlsx; .csv, .txt, .tsv:
// csv), data.delimiter "," (csv), data.decimal ".", data.missing [""];
// endpoint alpha 0.05; step outcome raw, transform none; linear and mixed
// steps anova 3, df residual (linear) or satterthwaite (mixed), estimation
// reml (mixed); variance checks (levene, brown-forsythe, bartlett) by the
// treatment column; hypothesis factor the treatment column (except term
// hypotheses), sides two-sided, better higher (non-inferiority), alpha the
// endpoint's, adjust dunnett (versus-control), tukey (pairwise) or none.
//
// # Semantic checks
//
// Validate reports: references to undeclared columns or columns of an
// unfitting role (with a spelling suggestion); control, from, to, at and
// hypothesis levels that are not declared; duplicate column, endpoint,
// step, exclusion and hypothesis ids; on-fail targets that do not exist,
// point to their own step, form a cycle, or leave a step unreachable from
// the first; transforms outside the response's declared range (log, log10,
// reciprocal and box-cox need min > 0, log-offset min + offset > 0, sqrt
// min >= 0, arcsine-sqrt min >= 0 and max <= 1; an undeclared bound is a
// warning); pseudo-replication (Hurlbert 1984, Ecol Monogr 54:187): with
// a repeat column or design.subsamples > 1, a step on raw values must be a
// mixed model with a random term containing the unit column (or a
// friedman/signed-rank test within the unit), otherwise it must derive one
// value per unit; model shape (linear and mixed need fixed terms, mixed
// needs random terms, linear takes none; welch and rank tests need
// compare, friedman and van-elteren need within); hypotheses whose kind
// does not fit their fields, margins that are missing or on the wrong
// side, ratio margins on a step without a log transform (warning), dunnett
// outside versus-control and tukey outside pairwise; alpha and fail-below
// outside (0, 1); amendments not dated YYYY-MM-DD, out of date order, or
// not ending at trial.version; no primary endpoint.
//
// # Diagnostics
//
// Every finding is a [Diagnostic]: Severity, a stable Code (e.g.
// "unknown-key", "wrong-role", "pseudo-replication"), Pos (file:line:col
// of the offending value), Path (its data path), a one-sentence lower-case
// Summary, and Related positions (e.g. the column declaration a reference
// points at). Findings are sorted by file, line, column and summary, and
// exact duplicates are dropped ([Diagnostics.Sort]).
//
// # Canonical form and hash
//
// [Canonical] is the plan's meaning as compact JSON (no whitespace, no
// HTML escaping, numbers in Go's encoding/json float64 form, which is the
// ECMAScript shortest round-trip form). Defaults are filled; positions,
// the file name, comments, quoting, flow or block style and the source's
// key order do not appear. The object has these keys, in this order, all
// always present (absent text is "", absent lists [], absent numbers
// without a default null):
//
//	furrow
//	trial: id, title, sponsor, analyst, version,
//	       amendments[]: version, date, reason, changes
//	data: file, format, sheet, delimiter, decimal, missing[]
//	columns[]: name, role, label, unit, min, max, levels[], control
//	design: layout, replicates, subsamples,
//	        least-units{per, count, below} (left out when not declared)
//	exclusions[]: id, drop, when, column, at, units[], reason
//	endpoints[]: id, response, primary, alpha,
//	  steps[]: id, model, outcome{derive, from, to, at},
//	           transform{kind, offset, lambda}, fixed[][], random[][],
//	           covariates[], compare, within, estimation, df, anova,
//	           checks[]: test, by[], fail-below, on-fail
//	           on-fail
//	  hypotheses[]: id, kind, factor, levels[], pairs[][], test, against,
//	                term[], margin{scale, lower, upper} or null, sides,
//	                better, alpha, adjust
//
// Each term is a list of column names, even a single one. Lists keep the
// order written (order is meaningful: steps, levels, terms). Levels, ids
// and versions are the text as written in the YAML.
//
// [Hash] is "sha256:" followed by the lower-case hex SHA-256 of the
// canonical bytes. Equivalent shell check, given the canonical JSON in
// canon.json: printf 'sha256:%s\n' "$(sha256sum < canon.json | cut -d' ' -f1)".
package plan
