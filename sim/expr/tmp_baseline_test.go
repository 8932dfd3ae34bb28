package expr_test

import (
	"math"
	"testing"
)

var xs = []float64{0.3, 0.2}

func BenchmarkTmpHandWritten(b *testing.B) {
	g := make([]float64, 2)
	for b.Loop() {
		a, c := xs[0], xs[1]
		sink = math.Log(a/(1-a)) - math.Log(c/(1-c))
		g[0] = 1 / (a * (1 - a))
		g[1] = -1 / (c * (1 - c))
	}
}
