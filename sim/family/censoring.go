package family

import (
	"fmt"
	"math"
	"strconv"
	"strings"
)

// Censoring is the law of independent right censoring of a lifetime:
// units enter at times uniform on [0, Entry] (all at time 0 when Entry
// is 0), the study ends at calendar time End (a unit entering at e is
// censored at End − e; no end when End is 0), and each unit is lost to
// follow-up after an independent exponential time of rate DropoutRate
// (none when 0). What is observed of a unit is min(lifetime, censoring
// time) and whether that was the lifetime (an event).
type Censoring struct {
	Entry       float64 `json:"entry,omitempty"`
	End         float64 `json:"end,omitempty"`
	DropoutRate float64 `json:"dropout_rate,omitempty"`
}

// Words describes the censoring in a sentence fragment, for the
// terminal, the page and the figures: "follow-up ends at 5 (entry
// uniform over [0, 2]); loss to follow-up at rate 0.05".
func (c Censoring) Words() string {
	var parts []string
	g := func(x float64) string { return strconv.FormatFloat(x, 'g', -1, 64) }
	switch {
	case c.End > 0 && c.Entry > 0:
		parts = append(parts, fmt.Sprintf("entry uniform over [0, %s], study ends at %s (follow-up %s to %s)", g(c.Entry), g(c.End), g(c.End-c.Entry), g(c.End)))
	case c.End > 0:
		parts = append(parts, fmt.Sprintf("all enter at 0, study ends at %s", g(c.End)))
	}
	if c.DropoutRate > 0 {
		parts = append(parts, fmt.Sprintf("loss to follow-up at rate %s", g(c.DropoutRate)))
	}
	return strings.Join(parts, "; ")
}

// survivalOf returns the probability that the censoring time exceeds t,
// P(C > t) for C = min(End − entry, dropout): the product of the
// end-of-study part (1 below End − Entry, falling linearly to 0 at End)
// and the dropout part exp(−DropoutRate·t).
func (c Censoring) survivalOf(t float64) float64 {
	s := math.Exp(-c.DropoutRate * t)
	if c.End > 0 {
		switch {
		case t >= c.End:
			return 0
		case t > c.End-c.Entry:
			s *= (c.End - t) / c.Entry
		}
	}
	return s
}

// exponentialEvents returns, for an exponential lifetime of rate λ under
// c, the probability of an event p = P(T ≤ C) and E[T·1(T ≤ C)], the
// expected time at risk contributed by events.
//
// Derived: with μ = λ + δ (δ the dropout rate) and an administrative
// censoring time a, P(T ≤ min(a, D)) = ∫₀ᵃ λe^(−μt) dt = (λ/μ)(1 − e^(−μa))
// and E[T; T ≤ min(a, D)] = (λ/μ²)(1 − (1 + μa)e^(−μa)). With entry
// uniform on [0, w], a is uniform on [E − w, E], and averaging gives
// p = (λ/μ)(1 − e^(−μE)·expm1(μw)/(μw)) and, since ∫(1 + μa)e^(−μa) da =
// −(2 + μa)e^(−μa)/μ, E[T; event] = (λ/μ²)(1 − [(2 + μ(E−w))e^(−μ(E−w)) −
// (2 + μE)e^(−μE)]/(μw)). Without an end a = ∞; without entry w → 0.
func (c Censoring) exponentialEvents(rate float64) (p, timeEvents float64) {
	mu := rate + c.DropoutRate
	var surv, surv2 float64 // the averages of e^(−μa) and (1 + μa)e^(−μa) over a
	switch {
	case c.End == 0:
	case c.Entry == 0:
		surv = math.Exp(-mu * c.End)
		surv2 = (1 + mu*c.End) * surv
	default:
		x := mu * c.Entry
		lo := c.End - c.Entry
		surv = math.Exp(-mu*c.End) * math.Expm1(x) / x
		// (2 + μ·lo)e^(−μ·lo) − (2 + μE)e^(−μE), with e^(−μ·lo) factored out:
		// (2 + μ·lo)(1 − e^(−x)) − x·e^(−x) = −(2 + μ·lo)·expm1(−x) − x·e^(−x).
		diff := math.Exp(-mu*lo) * (-(2+mu*lo)*math.Expm1(-x) - x*math.Exp(-x))
		surv2 = diff / x
	}
	return rate / mu * (1 - surv), rate / (mu * mu) * (1 - surv2)
}
