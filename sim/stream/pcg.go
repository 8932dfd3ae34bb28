package stream

import (
	"math"
	"math/bits"
)

// PCG is a permuted congruential generator with 128 bits of state and the
// DXSM output function: math/rand/v2's PCG, with math/rand/v2's Rand
// methods the simulation uses. Its zero value is seeded with (0, 0). A PCG
// is not safe for concurrent use; each worker owns one.
type PCG struct {
	hi, lo uint64
}

// New returns a generator seeded with (seed1, seed2), as rand.NewPCG.
func New(seed1, seed2 uint64) *PCG { return &PCG{hi: seed1, lo: seed2} }

// Seed resets the generator to the state rand.NewPCG(seed1, seed2) starts
// from.
func (p *PCG) Seed(seed1, seed2 uint64) { p.hi, p.lo = seed1, seed2 }

// Uint64 returns a uniformly distributed 64-bit value and advances the
// generator one step.
func (p *PCG) Uint64() uint64 {
	// The 128-bit LCG step, state × mul + inc (mod 2¹²⁸), with
	// math/rand/v2's constants.
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
	// DXSM, "double xorshift multiply", of the new state.
	const cheapMul = 0xda942042e4dd58b5
	hi ^= hi >> 32
	hi *= cheapMul
	hi ^= hi >> 48
	hi *= lo | 1
	return hi
}

// Float64 returns a uniform value in [0, 1): the low 53 bits of Uint64
// over 2⁵³, as rand.Rand's Float64.
func (p *PCG) Float64() float64 { return float64(p.Uint64()<<11>>11) / (1 << 53) }

// NormFloat64 returns a standard normal value by the ziggurat method, the
// same value rand.Rand's NormFloat64 returns from the same state.
func (p *PCG) NormFloat64() float64 {
	u := p.Uint64()
	z, ok := NormFast(u)
	if !ok {
		z, *p = NormFrom(*p, u)
	}
	return z
}

// NormFast is the normal ziggurat's fast path: for 64 random bits u it
// returns the normal value and true when u falls inside its layer's
// rectangle (about 97% of draws), else false. It inlines, so a hot
// loop can keep the generator in a local q, whose state then stays in
// registers:
//
//	u := q.Uint64()
//	z, ok := stream.NormFast(u)
//	if !ok {
//		z, q = stream.NormFrom(q, u)
//	}
//
// draws exactly what q.NormFloat64() draws.
func NormFast(u uint64) (float64, bool) {
	j := int32(u)
	i := u >> 32 & 0x7F
	return float64(j) * float64(wn[i]), absInt32(j) < kn[i]
}

// NormFrom finishes the normal draw whose first 64 bits u missed the fast
// path (NormFast returned false): the base strip's tail, the wedge test,
// and further tries, drawing more from the generator q as they need. It
// takes and returns the generator by value, so a caller's copy need not
// live in memory.
func NormFrom(q PCG, u uint64) (float64, PCG) {
	const rn = 3.442619855899 // the base strip's right edge
	for {
		j := int32(u)
		i := u >> 32 & 0x7F
		x := float64(j) * float64(wn[i])
		if absInt32(j) < kn[i] {
			return x, q
		}
		if i == 0 {
			for {
				x = -math.Log(q.Float64()) * (1.0 / rn)
				y := -math.Log(q.Float64())
				if y+y >= x*x {
					break
				}
			}
			if j > 0 {
				return rn + x, q
			}
			return -rn - x, q
		}
		if fn[i]+float32(q.Float64())*(fn[i-1]-fn[i]) < float32(math.Exp(-.5*x*x)) {
			return x, q
		}
		u = q.Uint64()
	}
}

// ExpFloat64 returns a standard exponential value (rate 1) by the
// ziggurat method, the same value rand.Rand's ExpFloat64 returns from the
// same state.
func (p *PCG) ExpFloat64() float64 {
	u := p.Uint64()
	x, ok := ExpFast(u)
	if !ok {
		x, *p = ExpFrom(*p, u)
	}
	return x
}

// ExpFast is the exponential ziggurat's fast path, as NormFast is the
// normal's: the value and true when the 64 bits u fall inside their
// layer's rectangle (about 98% of draws), else false.
func ExpFast(u uint64) (float64, bool) {
	j := uint32(u)
	i := uint8(u >> 32)
	return float64(j) * float64(we[i]), j < ke[i]
}

// ExpFrom finishes the exponential draw whose first 64 bits u missed the
// fast path (ExpFast returned false), as NormFrom does the normal's.
func ExpFrom(q PCG, u uint64) (float64, PCG) {
	const re = 7.69711747013104972 // the base strip's right edge
	for {
		j := uint32(u)
		i := uint8(u >> 32)
		x := float64(j) * float64(we[i])
		if j < ke[i] {
			return x, q
		}
		if i == 0 {
			return re - math.Log(q.Float64()), q
		}
		if fe[i]+float32(q.Float64())*(fe[i-1]-fe[i]) < float32(math.Exp(-x)) {
			return x, q
		}
		u = q.Uint64()
	}
}

func absInt32(i int32) uint32 {
	if i < 0 {
		return uint32(-i)
	}
	return uint32(i)
}
