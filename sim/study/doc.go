// Package study reads a study file: it decodes the TOML, validates every
// key (reporting all problems at once, each with file and line, as
// StudyErrors), builds the families' models and compiles the transforms.
// It also gives the delta-method predictions at the true parameters
// (Predict) and the interval's quantile at each n (Quantile: normal, or
// Student's t with the study's df), which need nothing but the study.
package study
