package report

import (
	"math"
	"strconv"
)

// formatFloat writes a number for the terminal with 8 significant digits:
// far more than any Monte Carlo estimate here can claim. A value that does
// not exist (NaN) is empty; infinities are Inf and -Inf. The CSV files
// write every digit instead (csvFloat).
func formatFloat(x float64) string {
	switch {
	case math.IsNaN(x):
		return ""
	case math.IsInf(x, 1):
		return "Inf"
	case math.IsInf(x, -1):
		return "-Inf"
	}
	return strconv.FormatFloat(x, 'g', 8, 64)
}
