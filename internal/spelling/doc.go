// Package spelling suggests the known name a misspelt one was meant to be,
// for error messages that say "did you mean".
package spelling
