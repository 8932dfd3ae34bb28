package stream

import (
	"math/rand/v2"
	"testing"
)

// Every method agrees with math/rand/v2's Rand over a *rand.PCG, draw for
// draw, for several seeds and an interleaving of methods chosen at
// random, the fast-path-and-finish form of the hot loops included (so
// each method also leaves the state where the library's leaves it). With
// 4·10⁶ draws a seed the split forms alone reach the ziggurats' slow
// paths tens of thousands of times (counted below).
func TestSameDrawsAsTheLibrary(t *testing.T) {
	draws := 4_000_000
	if testing.Short() {
		draws = 200_000
	}
	seeds := [][2]uint64{{0, 0}, {1, 2}, {6060, 17}, {^uint64(0), 12345}, {0x9e3779b97f4a7c15, 0xbf58476d1ce4e5b9}}
	normSlow, expSlow := 0, 0 // split-form draws that took the slow path
	for _, seed := range seeds {
		lib := rand.New(rand.NewPCG(seed[0], seed[1]))
		mine := New(seed[0], seed[1])
		pick := rand.New(rand.NewPCG(seed[1], 99))
		for i := range draws {
			var got, want float64
			m := pick.IntN(6)
			switch m {
			case 0:
				got, want = float64(mine.Uint64()>>11), float64(lib.Uint64()>>11)
			case 1:
				got, want = mine.Float64(), lib.Float64()
			case 2:
				got, want = mine.NormFloat64(), lib.NormFloat64()
			case 3:
				got, want = mine.ExpFloat64(), lib.ExpFloat64()
			case 4: // the split form of the hot loops
				u := mine.Uint64()
				z, ok := NormFast(u)
				if !ok {
					z, *mine = NormFrom(*mine, u)
					normSlow++
				}
				got, want = z, lib.NormFloat64()
			case 5:
				u := mine.Uint64()
				x, ok := ExpFast(u)
				if !ok {
					x, *mine = ExpFrom(*mine, u)
					expSlow++
				}
				got, want = x, lib.ExpFloat64()
			}
			if got != want {
				t.Fatalf("seed %v, draw %d (method %d): %v, want %v", seed, i, m, got, want)
			}
		}
		// The full 64 bits too, after all that.
		for i := range 1000 {
			if a, b := mine.Uint64(), lib.Uint64(); a != b {
				t.Fatalf("seed %v, final draw %d: %#x, want %#x", seed, i, a, b)
			}
		}
	}
	// The slow paths were reached often (a fast path that accepted
	// everything would fail the comparison, but say so plainly).
	t.Logf("slow paths of the split form: normal %d, exponential %d", normSlow, expSlow)
	if !testing.Short() && (normSlow < 10000 || expSlow < 10000) {
		t.Errorf("slow paths reached %d (normal) and %d (exponential) times, want at least 10000 each", normSlow, expSlow)
	}
}

// Seed restarts the stream where rand.NewPCG starts it, and the zero
// value is the (0, 0) seed.
func TestSeed(t *testing.T) {
	var zero PCG
	var p PCG
	p.Seed(5, 6)
	p.Uint64()
	p.Seed(0, 0)
	lib := rand.New(rand.NewPCG(0, 0))
	for range 100 {
		w := lib.NormFloat64()
		if a, b := zero.NormFloat64(), p.NormFloat64(); a != w || b != w {
			t.Fatalf("got %v and %v, want %v", a, b, w)
		}
	}
}

var sink float64

// BenchmarkDraws times 1000 draws summed, through rand.Rand (an interface
// call per draw) and through PCG (inlined).
func BenchmarkDraws(b *testing.B) {
	const n = 1000
	cases := []struct {
		name string
		lib  func(*rand.Rand) float64
		mine func(*PCG) float64
	}{
		{"Float64", (*rand.Rand).Float64, (*PCG).Float64},
		{"NormFloat64", (*rand.Rand).NormFloat64, (*PCG).NormFloat64},
		{"ExpFloat64", (*rand.Rand).ExpFloat64, (*PCG).ExpFloat64},
	}
	for _, c := range cases {
		b.Run(c.name+"/rand.Rand", func(b *testing.B) {
			r := rand.New(rand.NewPCG(1, 2))
			var s float64
			for b.Loop() {
				s += libSum(r, n, c.name)
			}
			sink = s
		})
		b.Run(c.name+"/PCG", func(b *testing.B) {
			p := New(1, 2)
			var s float64
			for b.Loop() {
				s += mineSum(p, n, c.name)
			}
			sink = s
		})
		if c.name == "Float64" {
			continue
		}
		b.Run(c.name+"/PCG_fast_path_in_locals", func(b *testing.B) {
			p := New(1, 2)
			var s float64
			for b.Loop() {
				s += localSum(p, n, c.name)
			}
			sink = s
		})
	}
}

// localSum draws as the hottest samplers do: the generator's state in a
// local (so it can live in registers), the ziggurat's fast path inlined,
// the slow path taking and returning the generator by value.
//
//go:noinline
func localSum(p *PCG, n int, method string) (s float64) {
	q := *p
	switch method {
	case "NormFloat64":
		for range n {
			u := q.Uint64()
			z, ok := NormFast(u)
			if !ok {
				z, q = NormFrom(q, u)
			}
			s += z
		}
	case "ExpFloat64":
		for range n {
			u := q.Uint64()
			x, ok := ExpFast(u)
			if !ok {
				x, q = ExpFrom(q, u)
			}
			s += x
		}
	}
	*p = q
	return s
}

// libSum and mineSum call the methods directly (not through a func
// value), as the samplers do, so the compiler may inline them. They are
// two copies on purpose: one generic function would share a single
// instantiation for both pointer types and call through a dictionary,
// which is the indirect call this package exists to avoid.
//
//go:noinline
func libSum(r *rand.Rand, n int, method string) (s float64) {
	switch method {
	case "Float64":
		for range n {
			s += r.Float64()
		}
	case "NormFloat64":
		for range n {
			s += r.NormFloat64()
		}
	case "ExpFloat64":
		for range n {
			s += r.ExpFloat64()
		}
	}
	return s
}

//go:noinline
func mineSum(p *PCG, n int, method string) (s float64) {
	switch method {
	case "Float64":
		for range n {
			s += p.Float64()
		}
	case "NormFloat64":
		for range n {
			s += p.NormFloat64()
		}
	case "ExpFloat64":
		for range n {
			s += p.ExpFloat64()
		}
	}
	return s
}
