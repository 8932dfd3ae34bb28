package family

import (
	"math"

	"deltaprobe/sim/stream"
)

// The data-only families: drawn from, never fitted. A study names the
// family it fits to them (fit = "normal" for the Student t, "poisson" for
// the zero-inflated Poisson).
func init() {
	register(&Family{
		Name:      "student_t",
		Summary:   "location + scale·T with T ~ Student t(df), df > 4 so that the fourth moment (and the sandwich of a normal fit) exists",
		Estimator: "none: data only; fit = \"normal\" estimates its mean and sd",
		Params: []ParamSpec{
			{Name: "location", Accepts: "any real number", Check: anyReal},
			{Name: "scale", Accepts: "a number > 0", Check: positive},
			{Name: "df", Accepts: "a number > 4 (degrees of freedom)", Check: func(v float64) bool { return v > 4 }},
		},
		Estimates: []string{},
		Support:   Reals,
		DataOnly:  true,
		law: func(v map[string]float64) (law, error) {
			return &studentTLaw{loc: v["location"], scale: v["scale"], df: v["df"], gen: newGammaGen(v["df"] / 2)}, nil
		},
	})
	register(&Family{
		Name:      "zero_inflated_poisson",
		Summary:   "0 with probability zero_share, otherwise Poisson(mean): mean (1 − zero_share)·mean",
		Estimator: "none: data only; fit = \"poisson\" estimates its overall mean",
		Discrete:  true,
		Params: []ParamSpec{
			{Name: "mean", Accepts: "a number > 0 (the Poisson part's mean)", Check: positive},
			{Name: "zero_share", Accepts: "a number from 0 up to, not including, 1", Check: func(v float64) bool { return v >= 0 && v < 1 }},
		},
		Estimates: []string{},
		Support:   Counts,
		DataOnly:  true,
		law: func(v map[string]float64) (law, error) {
			m, err := newPoissonModel(v["mean"])
			if err != nil {
				return nil, err
			}
			return &zipLaw{pois: m, zero: v["zero_share"]}, nil
		},
	})
}

// studentTLaw is location + scale·Z/√(V/df), Z ~ N(0,1) and V ~ χ²(df)
// = 2·Gamma(df/2, 1) independent (the definition of Student's t). Its
// central moments are 0, scale²·df/(df−2), 0 and
// 3·scale⁴·df²/((df−2)(df−4)) (Johnson, Kotz & Balakrishnan 1995, ch. 28,
// from memory; the tests check them by quadrature of gonum's density).
type studentTLaw struct {
	loc, scale, df float64
	gen            gammaGen
}

func (l *studentTLaw) one(rng *stream.PCG) float64 {
	z := rng.NormFloat64()
	v := 2 * l.gen.std(rng)
	return l.loc + l.scale*z/math.Sqrt(v/l.df)
}

func (l *studentTLaw) moments() lawMoments {
	s2, nu := l.scale*l.scale, l.df
	return lawMoments{l.loc, s2 * nu / (nu - 2), 0, 3 * s2 * s2 * nu * nu / ((nu - 2) * (nu - 4))}
}

// zipLaw is 0 with probability zero, otherwise Poisson(μ). Its raw
// moments are (1 − zero) times the Poisson's, E yʳ for r = 1…4: μ,
// μ + μ², μ + 3μ² + μ³, μ + 7μ² + 6μ³ + μ⁴ (Stirling numbers of the second
// kind times μᵏ, from memory; checked against the pmf in the tests).
type zipLaw struct {
	pois *poissonModel
	zero float64
}

func (l *zipLaw) one(rng *stream.PCG) float64 {
	if rng.Float64() < l.zero {
		return 0
	}
	return l.pois.draw(rng)
}

func (l *zipLaw) moments() lawMoments {
	mu, w := l.pois.mean, 1-l.zero
	return centralFromRaw(w*mu, w*(mu+mu*mu), w*(mu+3*mu*mu+mu*mu*mu), w*(mu+7*mu*mu+6*mu*mu*mu+mu*mu*mu*mu))
}
