package family

import (
	"math"
	"testing"

	"deltaprobe/sim/stream"
)

// The hot draw loops keep the generator in a local and inline the
// ziggurat's fast path (stream.NormFast, ExpFast). They must draw what the
// plain method calls draw, value for value, and leave the generator
// where the method calls leave it, or a study's numbers would change.
// Each is checked against a plain loop over the same stream, at sizes
// that do and do not reach the ziggurats' slow paths.
func TestLocalDrawLoopsMatchMethodCalls(t *testing.T) {
	for _, n := range []int{0, 1, 7, 1000, 100000} {
		seed := uint64(n + 1)

		got, want := stream.New(seed, 3), stream.New(seed, 3)
		s1, s2 := sumStdNormals(got, n)
		var w1, w2 float64
		for range n {
			z := want.NormFloat64()
			w1 += z
			w2 += z * z
		}
		if s1 != w1 || s2 != w2 || *got != *want {
			t.Errorf("sumStdNormals(n=%d) = %v, %v; plain loop %v, %v (same state: %v)", n, s1, s2, w1, w2, *got == *want)
		}

		got, want = stream.New(seed, 4), stream.New(seed, 4)
		e := sumStdExponentials(got, n)
		var we float64
		for range n {
			we += want.ExpFloat64()
		}
		if e != we || *got != *want {
			t.Errorf("sumStdExponentials(n=%d) = %v; plain loop %v (same state: %v)", n, e, we, *got == *want)
		}

		// Censoring at end only: lifetimes rate/1 in standard units.
		const rate, end = 0.5, 3.0
		got, want = stream.New(seed, 5), stream.New(seed, 5)
		ev, tm := drawEndOnly(got, n, rate, end)
		var wev, wsum float64
		for range n {
			y := want.ExpFloat64()
			if y > end*rate {
				wsum += end * rate
				continue
			}
			wev++
			wsum += y
		}
		if ev != wev || tm != wsum/rate || *got != *want {
			t.Errorf("drawEndOnly(n=%d) = %v, %v; plain loop %v, %v (same state: %v)", n, ev, tm, wev, wsum/rate, *got == *want)
		}

		// Entry, end and dropout: mu the total hazard, pLife the lifetime's share.
		// (Variables, not constants: Go folds constant arithmetic exactly,
		// the function rounds each product.)
		mu, entry := 0.55, 2.0
		pLife := 0.5 / mu
		got, want = stream.New(seed, 6), stream.New(seed, 6)
		ev, tm = drawEntryDropout(got, n, mu, end, entry, pLife)
		wev, wsum = 0, 0
		threshold := uint64(math.Ceil(pLife * (1 << 32)))
		for range n {
			y := want.ExpFloat64()
			u := want.Uint64()
			endMu, step := end*mu, entry*mu*0x1p-32
			c := endMu - step*float64(u>>32)
			if y > c {
				wsum += c
				continue
			}
			wsum += y
			if u&0xffffffff < threshold {
				wev++
			}
		}
		if ev != wev || tm != wsum/mu || *got != *want {
			t.Errorf("drawEntryDropout(n=%d) = %v, %v; plain loop %v, %v (same state: %v)", n, ev, tm, wev, wsum/mu, *got == *want)
		}
	}
}

// gammaGen.std skips log1p when the squeeze accepts; it must return the
// value draw returns (d·w) from the same stream, and leave the stream
// where draw leaves it, for shapes with and without the boost.
func TestGammaStdIsDrawsValue(t *testing.T) {
	for _, shape := range []float64{0.05, 0.5, 1, 2.5, 40} {
		g := newGammaGen(shape)
		a, b := stream.New(9, uint64(shape*100)), stream.New(9, uint64(shape*100))
		for i := range 20000 {
			x := g.std(a)
			w, _ := g.draw(b)
			if x != g.d*w || *a != *b {
				t.Fatalf("shape %v, draw %d: std %v, draw's d·w %v (same state: %v)", shape, i, x, g.d*w, *a == *b)
			}
		}
	}
}
