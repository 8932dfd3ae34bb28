package runner

import (
	"context"
	"math"
	"math/big"
	"math/rand/v2"
	"testing"

	"deltaprobe/sim/study"
)

// loadReference loads the study that `make bench` times.
func loadReference(b *testing.B) *study.Study {
	b.Helper()
	s, err := study.Load("../../studies/bench_reference.toml")
	if err != nil {
		b.Fatal(err)
	}
	return s
}

// BenchmarkRunReference runs the whole reference study at a tenth of its
// replicates: the benchmark to profile (-cpuprofile) when the figures of
// cmd/deltabench move. Its unit is one study run; ns/draw is reported.
func BenchmarkRunReference(b *testing.B) {
	s := loadReference(b)
	s.Replicates /= 10
	draws := 0
	for _, n := range s.SampleSizes {
		draws += n * s.Replicates
	}
	b.ReportAllocs()
	for b.Loop() {
		if _, err := Run(context.Background(), s, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(draws), "ns/draw")
}

// BenchmarkAccumulate times what one transform's accumulators do with one
// replicate's τ̂ and plug-in variance: the Wald check, the counters, the
// moments and the two pivot histograms.
func BenchmarkAccumulate(b *testing.B) {
	acc := cellAcc{truth: 0.25, sdDelta: 0.02, vals: make([]float64, 0, BlockSize), delta: newHistogram(), wald: newHistogram()}
	rng := rand.New(rand.NewPCG(1, 2))
	const m = 1024
	vs, pvs := make([]float64, m), make([]float64, m)
	for i := range vs {
		vs[i] = 0.25 + 0.02*rng.NormFloat64()
		pvs[i] = 0.0004 * (1 + 0.1*rng.NormFloat64())
	}
	b.ReportAllocs()
	i := 0
	for b.Loop() {
		acc.add(vs[i%m], pvs[i%m], 1.959963984540054)
		i++
		// The block-end reduction is part of the per-replicate cost:
		// charge it here, as runBlock does, once per BlockSize values.
		if len(acc.vals) == BlockSize {
			acc.reduce()
		}
	}
}

// The block-at-a-time moments are accurate against central sums computed
// in 256-bit arithmetic, including on data far from zero (sd 1 around
// 10⁶ or −3·10⁸), where Welford's update (Add) loses up to 10⁻⁵ and a
// careless two-pass sum would lose more. (Kept beside BenchmarkAccumulate,
// which times the same code.)
func TestMomentsOfAccuracy(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, offset := range []float64{0, 1e6, -3e8} {
		for _, n := range []int{1, 2, 3, 17, BlockSize} {
			xs := make([]float64, n)
			for i := range xs {
				xs[i] = offset + rng.ExpFloat64()
			}
			exact := exactMoments(xs)
			got := momentsOf(xs)
			if got.N != int64(n) {
				t.Fatalf("N = %d, want %d", got.N, n)
			}
			if ulp := math.Nextafter(math.Abs(exact[0]), math.Inf(1)) - math.Abs(exact[0]); math.Abs(got.Mean-exact[0]) > 4*ulp {
				t.Errorf("offset %g, n %d: mean %v, exact %v", offset, n, got.Mean, exact[0])
			}
			// A central sum of n terms, each of size |exact|/n, with
			// rounding of order 10⁻¹⁶ per term: 10⁻¹⁴ per term is loose
			// for two-pass and far too tight for Welford at an offset.
			for k, m := range []float64{got.M2, got.M3, got.M4} {
				want := exact[k+1]
				if tol := 1e-14 * float64(n) * max(1, math.Abs(want)/float64(n)); math.Abs(m-want) > tol {
					t.Errorf("offset %g, n %d: M%d = %v, exact %v", offset, n, k+2, m, want)
				}
			}
		}
	}
}

// exactMoments returns the mean and the central sums M2, M3, M4 of xs,
// computed in 256-bit floating point and rounded once.
func exactMoments(xs []float64) [4]float64 {
	const prec = 256
	f := func(x float64) *big.Float { return new(big.Float).SetPrec(prec).SetFloat64(x) }
	sum := f(0)
	for _, x := range xs {
		sum.Add(sum, f(x))
	}
	mean := new(big.Float).SetPrec(prec).Quo(sum, f(float64(len(xs))))
	s := [3]*big.Float{f(0), f(0), f(0)}
	for _, x := range xs {
		d := new(big.Float).SetPrec(prec).Sub(f(x), mean)
		p := new(big.Float).SetPrec(prec).Mul(d, d)
		for k := range s {
			s[k].Add(s[k], p)
			p.Mul(p, d)
		}
	}
	var out [4]float64
	out[0], _ = mean.Float64()
	for k := range s {
		out[k+1], _ = s[k].Float64()
	}
	return out
}
