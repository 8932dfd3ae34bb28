// Package study reads a study file: it decodes the TOML, validates every
// key (reporting all problems at once, each with file and line, as
// StudyErrors), builds the families' models and compiles the transforms.
// It also gives the delta-method predictions at the true parameters
// (Predict), which need nothing but the study.
package study
