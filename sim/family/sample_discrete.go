package family

import (
	"fmt"
	"math"
	"math/bits"

	"deltaprobe/sim/stream"
)

// maxTableLen bounds an inversion table; 2²⁰ entries take 12 MiB with the
// guide. A binomial wider than that is refused (see newBinomialModel).
const maxTableLen = 1 << 20

// errTableTooWide is wrapped by the families that build tables.
var errTableTooWide = fmt.Errorf("the distribution needs more than %d inversion-table entries", maxTableLen)

// tableTail is the relative probability mass left outside an inversion
// table. It is far below 2⁻⁵³ ≈ 1.1·10⁻¹⁶, the spacing of rng.Float64, so
// a draw by inversion of a 53-bit uniform could not reach the omitted tail
// even if it were tabulated: the table is exact to the resolution of the
// uniform, and no tail fallback is needed.
const tableTail = 1e-20

// cdfTable draws from a discrete distribution on lo, lo+1, …, lo+len(cdf)−1
// by inversion with a guide table (Chen & Asau 1974, "On generating random
// variates from an empirical distribution", AIIE Transactions 6:163–166):
// for U ~ U(0,1) the draw is the least k with cdf[k] > U, and the search
// starts at guide[⌊U·m⌋], the least k with cdf[k] > j/m, so it takes one
// comparison plus on average at most len(cdf)/m more. m is a power of two,
// which makes U·m and j/m exact. The table is read-only once built, so one
// table serves every worker.
type cdfTable struct {
	lo    int
	cdf   []float64 // cdf[k] = P(Y ≤ lo+k); cdf[len−1] = 1 exactly
	guide []int32
	m     float64 // len(guide)
}

// newUnimodalTable tabulates a log-concave probability mass function f on
// the integers kmin…kmax from its mode outward, through the ratios
// up(k) = f(k+1)/f(k) and down(k) = f(k−1)/f(k). Log-concavity makes the
// ratios shrink away from the mode, so once the ratio r that produced the
// latest entry f is below 1, the tail beyond it is at most f·r/(1−r); the
// walk stops when that bound falls below tableTail of the mass so far. Working with ratios
// relative to f(mode) = 1 and normalising at the end avoids the absolute
// rounding of log-gamma for large arguments.
func newUnimodalTable(mode, kmin, kmax int, up, down func(k int) float64) (*cdfTable, error) {
	return newTableUpBound(mode, kmin, kmax, up, down, 0)
}

// newTableUpBound is newUnimodalTable for a pmf whose up-ratios above the
// mode need not shrink but never exceed upBound < 1 (0: they shrink, as
// log-concavity makes them): the tail beyond an entry f is then at most
// f·upBound/(1−upBound). The negative binomial with size below 1 is such
// a pmf: its ratios (k+size)/(k+1)·q rise towards q.
func newTableUpBound(mode, kmin, kmax int, up, down func(k int) float64, upBound float64) (*cdfTable, error) {
	total := 1.0
	var upper, lower []float64
	for k, w := mode, 1.0; k < kmax; k++ {
		r := up(k)
		w *= r
		upper = append(upper, w)
		total += w
		if upBound > 0 {
			if w*upBound/(1-upBound) <= tableTail*total {
				break
			}
		} else if r < 1 && w*r/(1-r) <= tableTail*total {
			break
		}
		if len(upper) > maxTableLen {
			return nil, errTableTooWide
		}
	}
	for k, w := mode, 1.0; k > kmin; k-- {
		r := down(k)
		w *= r
		lower = append(lower, w)
		total += w
		if r < 1 && w*r/(1-r) <= tableTail*total {
			break
		}
		if len(lower)+len(upper) > maxTableLen {
			return nil, errTableTooWide
		}
	}
	n := len(lower) + 1 + len(upper)
	cdf := make([]float64, n)
	var cum float64
	for i := range n {
		switch j := i - len(lower); {
		case j < 0:
			cum += lower[len(lower)-1-i]
		case j == 0:
			cum += 1
		default:
			cum += upper[j-1]
		}
		cdf[i] = cum
	}
	for i := range cdf {
		cdf[i] /= cum
	}
	cdf[n-1] = 1
	m := 1 << bits.Len(uint(n-1))
	guide := make([]int32, m)
	k := 0
	for j := range guide {
		for cdf[k] <= float64(j)/float64(m) {
			k++
		}
		guide[j] = int32(k)
	}
	return &cdfTable{lo: mode - len(lower), cdf: cdf, guide: guide, m: float64(m)}, nil
}

// draw returns one variate; cdf's last entry is 1 > U, so the search ends
// inside the table.
func (t *cdfTable) draw(rng *stream.PCG) int {
	u := rng.Float64()
	k := int(t.guide[int(u*t.m)])
	for t.cdf[k] <= u {
		k++
	}
	return t.lo + k
}

// ptrsPoisson draws Poisson(μ) variates for large μ by the transformed
// rejection method with squeeze PTRS of Hörmann (1993), "The transformed
// rejection method for generating Poisson random variables", Insurance:
// Mathematics and Economics 12:39–45, valid for μ ≥ 10. Its constants are
// the paper's as recalled here (TestSamplePTRS checks the output against
// the Poisson pmf down to μ = 10); the acceptance test is done on the log
// scale with a form of log f(k) that stays accurate for μ far beyond 10⁶
// (see logPMF).
type ptrsPoisson struct {
	mu, logMu          float64
	a, b, vr, invAlpha float64
}

func newPTRSPoisson(mu float64) ptrsPoisson {
	if !(mu >= 10) {
		panic("sim: PTRS needs a Poisson mean ≥ 10")
	}
	b := 0.931 + 2.53*math.Sqrt(mu)
	return ptrsPoisson{
		mu:       mu,
		logMu:    math.Log(mu),
		a:        -0.059 + 0.02483*b,
		b:        b,
		vr:       0.9277 - 3.6224/(b-2),
		invAlpha: 1.1239 + 1.1328/(b-3.4),
	}
}

// draw returns one variate (as a float64: integers up to 2⁵³ are exact).
func (p *ptrsPoisson) draw(rng *stream.PCG) float64 {
	for {
		u := rng.Float64() - 0.5
		v := rng.Float64()
		us := 0.5 - math.Abs(u)
		k := math.Floor((2*p.a/us+p.b)*u + p.mu + 0.43)
		if us >= 0.07 && v <= p.vr {
			return k
		}
		if k < 0 || (us < 0.013 && v > us) {
			continue
		}
		if math.Log(v*p.invAlpha/(p.a/(us*us)+p.b)) <= p.logPMF(k) {
			return k
		}
	}
}

// logPMF returns log f(k) = k log μ − μ − log k!. For k ≥ 10 it uses
// Stirling's form log k! = k log k − k + ½log(2πk) + δ(k) and writes
// k log(μ/k) + k − μ = −μ·((1+r)·log1p(r) − r) with r = (k−μ)/μ, which
// avoids cancelling terms of size k log μ.
func (p *ptrsPoisson) logPMF(k float64) float64 {
	if k < 10 {
		lg, _ := math.Lgamma(k + 1)
		return k*p.logMu - p.mu - lg
	}
	r := (k - p.mu) / p.mu
	return -p.mu*((1+r)*math.Log1p(r)-r) - 0.5*math.Log(2*math.Pi*k) - stirlingCorrection(k)
}

// stirlingCorrection returns δ(k) = log k! − (k log k − k + ½log(2πk)) for
// k ≥ 10 from its asymptotic series Σ B₂ⱼ/(2j(2j−1)k^(2j−1)) =
// 1/(12k) − 1/(360k³) + 1/(1260k⁵) − 1/(1680k⁷) + 1/(1188k⁹) (Abramowitz
// & Stegun 6.1.41), whose first omitted term, −691/(360360k¹¹), is below
// 2·10⁻¹⁴ at k = 10.
func stirlingCorrection(k float64) float64 {
	r := 1 / k
	r2 := r * r
	return r * (1.0/12 + r2*(-1.0/360+r2*(1.0/1260+r2*(-1.0/1680+r2/1188))))
}
