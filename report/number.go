package report

import (
	"math"
	"strconv"
)

// formatFloat writes a number for the terminal with 8 significant digits:
// far more than any Monte Carlo estimate here can claim. The CSV files
// write every digit instead (csvFloat).
func formatFloat(x float64) string { return plainFloat(x, 8) }

// plainFloat writes x with digits significant digits (−1: the shortest
// that parses back to x); a value that does not exist (NaN) is empty,
// infinities are Inf and -Inf.
func plainFloat(x float64, digits int) string {
	switch {
	case math.IsNaN(x):
		return ""
	case math.IsInf(x, 1):
		return "Inf"
	case math.IsInf(x, -1):
		return "-Inf"
	}
	return strconv.FormatFloat(x, 'g', digits, 64)
}
