package family

import (
	"encoding/binary"
	"math/bits"
	"math/rand/v2"
	"testing"
)

// A measured look at the draw-by-draw path's generator (see DEVELOPERS.md,
// "The draw-by-draw path"): every draw today goes through rand.Rand,
// whose Uint64 calls the *rand.PCG source through an interface, so the
// generator's 128-bit state is loaded from and stored to memory on every
// draw. inlinePCG is the same generator (PCG with 128-bit state and the
// DXSM output function: O'Neill 2014, "PCG: a family of simple fast
// space-efficient statistically good algorithms for random number
// generation"; the constants are math/rand/v2's, read from its state
// encoding below and checked output for output) as a concrete type whose
// step the compiler inlines, so a loop can keep the state in registers.
// It is an experiment kept with its measurement; nothing outside this
// file uses it.
type inlinePCG struct{ hi, lo uint64 }

// inlinePCGFrom copies p's state, read from its binary encoding ("pcg:"
// then the high and low 64 bits, big-endian).
func inlinePCGFrom(tb testing.TB, p *rand.PCG) inlinePCG {
	b, err := p.MarshalBinary()
	if err != nil || len(b) != 20 || string(b[:4]) != "pcg:" {
		tb.Fatalf("unexpected PCG encoding %q (%v)", b, err)
	}
	return inlinePCG{hi: binary.BigEndian.Uint64(b[4:12]), lo: binary.BigEndian.Uint64(b[12:20])}
}

func (p *inlinePCG) Uint64() uint64 {
	const (
		mulHi = 2549297995355413924
		mulLo = 4865540595714422341
		incHi = 6364136223846793005
		incLo = 1442695040888963407
	)
	hi, lo := bits.Mul64(p.lo, mulLo)
	hi += p.hi*mulLo + p.lo*mulHi
	lo, c := bits.Add64(lo, incLo, 0)
	hi, _ = bits.Add64(hi, incHi, c)
	p.lo, p.hi = lo, hi
	const cheapMul = 0xda942042e4dd58b5
	hi ^= hi >> 32
	hi *= cheapMul
	hi ^= hi >> 48
	hi *= lo | 1
	return hi
}

// Float64 is rand.Rand's: the top 53 bits over 2⁵³.
func (p *inlinePCG) Float64() float64 { return float64(p.Uint64()<<11>>11) / (1 << 53) }

// The copy is the same generator: the same outputs, bit for bit, as
// math/rand/v2's PCG for several seeds (so adopting it would change no
// study's numbers).
func TestInlinePCGIsTheStandardPCG(t *testing.T) {
	for _, seed := range [][2]uint64{{0, 0}, {1, 2}, {6060, 17}, {^uint64(0), 12345}} {
		std := rand.NewPCG(seed[0], seed[1])
		mine := inlinePCGFrom(t, std)
		r := rand.New(std)
		for i := range 100000 {
			if a, b := mine.Float64(), r.Float64(); a != b {
				t.Fatalf("seed %v, draw %d: %v, want %v", seed, i, a, b)
			}
		}
	}
}

//go:noinline
func sumUniformsRand(rng *rand.Rand, n int) (s float64) {
	for range n {
		s += rng.Float64()
	}
	return s
}

//go:noinline
func sumUniformsInline(p *inlinePCG, n int) (s float64) {
	q := *p // the state in locals, so it can stay in registers
	for range n {
		s += q.Float64()
	}
	*p = q
	return s
}

// BenchmarkUniformDraws times 1000 uniform draws summed, through
// rand.Rand (today's path) and through the inlined generator.
func BenchmarkUniformDraws(b *testing.B) {
	const n = 1000
	b.Run("rand.Rand", func(b *testing.B) {
		rng := rand.New(rand.NewPCG(1, 2))
		var s float64
		for b.Loop() {
			s += sumUniformsRand(rng, n)
		}
		sink = s
	})
	b.Run("inline", func(b *testing.B) {
		p := inlinePCGFrom(b, rand.NewPCG(1, 2))
		var s float64
		for b.Loop() {
			s += sumUniformsInline(&p, n)
		}
		sink = s
	})
	b.Run("rand.Rand_NormFloat64", func(b *testing.B) {
		rng := rand.New(rand.NewPCG(1, 2))
		var s float64
		for b.Loop() {
			for range n {
				s += rng.NormFloat64()
			}
		}
		sink = s
	})
}

var sink float64
