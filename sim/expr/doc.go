// Package expr compiles transform expressions such as
// log(a.p/(1-a.p)) - log(b.p/(1-b.p)) into flat programs that evaluate a
// scalar function τ(x) of named parameters together with its exact gradient
// and, at a single point, its exact Hessian.
//
// The language has decimal numbers (2, 0.5, 1e-3, .5), parameter names
// (an ASCII letter or "_", then letters, digits or "_", with parts joined by
// dots as in treated.p), the binary operators + - * / ^, unary minus,
// parentheses and the one-argument functions log, exp, sqrt, log1p, expm1,
// logit, expit, tanh, atanh and Phi (the standard normal CDF). "^" binds
// tightest, is right-associative and binds tighter than unary minus, so
// -x^2 is -(x^2) and 2^-1 is 2^(-1); then come * and /, then + and -, both
// left-associative. log is the natural logarithm. Two spellings from
// other notations are refused with a hint: ln (use log) and ** (use ^).
//
// Derivatives come from forward-mode automatic differentiation over the
// compiled instructions: first order in Evaluator.ValueGrad, which allocates
// nothing and is meant for the per-replicate loop, and second order in
// Program.ValueGradHessian, which is meant to run once at the true parameter.
//
// What the package refuses to do, on purpose:
//   - It does not extend the language: no implied multiplication, no commas
//     or multi-argument functions, no unary plus, no comparisons or
//     conditionals, no user-defined functions, no non-ASCII names.
//   - It never differentiates numerically; every derivative is an exact
//     formula, so finite differences appear only in the tests, as an outside
//     reference.
//   - It does not report domain errors. log(-1), 1/0 and the like yield NaN
//     or ±Inf in the value or the derivatives, and the caller decides that a
//     non-finite result means "undefined here".
//   - It rejects hostile input instead of working through it: sources longer
//     than 4096 bytes and nesting deeper than 64 levels are syntax errors.
//
// A Program is immutable and safe for concurrent use. An Evaluator carries
// the scratch space of one goroutine and must not be shared.
package expr
