// Package estimate fits the treatment × moderator model of METHODS.md and
// reports the treatment's effect within each moderator group, the
// differences between groups and their tests.
//
// The model (METHODS §1):
//
//	y = b0 + b1·T + b2'·M + b3'·(T × M) + g'·C + e
//
// The effect of T at moderator value m is the linear combination
// θ(m) = b1 + b3'·d(m); its standard error uses the full covariance of the
// coefficients, Var(a'b) = a'Va. Everything here is pure computation on
// columns of numbers and text: the package knows nothing of files, sheets or
// windows. Bad data returns an *Error that says, in plain words, what is
// wrong and what to do; it never panics.
//
// The fit is a pivoted Householder QR (qr.go), refined iteratively when
// its error bound asks for it (lsq.go), its work on rows split into fixed
// blocks run on all cores with the same results on any number of them
// (parallel.go); the streamed fit (stream.go, and a file per pass:
// stream_survey.go, stream_factor.go, stream_residuals.go) works on a few chunks at
// once and combines them in chunk order, to the same end (streampipe.go);
// variance estimators are in variance.go, linear combinations and tests in
// effects.go, the Johnson–Neyman interval in jn.go, multiplicity
// adjustments in adjust.go and screen.go, the wild cluster bootstrap in
// bootstrap.go, the check of a continuous moderator's line in linearity.go,
// unit effects (the within transformation of a before-and-after design)
// in within.go.
//
// Three files pass 500 lines because each holds one concept whose parts
// are read together: design.go (the model matrix's columns, names and
// checks of one Spec), bootstrap.go (the restricted wild cluster
// bootstrap: per-cluster blocks, draws and p-values share their state)
// and qr.go (the two-stage Householder QR and its merges).
package estimate
