package sim

import (
	"context"
	"math/rand/v2"
	"testing"
)

// loadReference loads the study that `make bench` times.
func loadReference(b *testing.B) *Study {
	b.Helper()
	s, err := Load("../studies/bench_reference.toml")
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
	acc := cellAcc{truth: 0.25, sdDelta: 0.02, delta: newHistogram(), wald: newHistogram()}
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
	}
}
