package measure

import (
	"fmt"
	"math"

	"deltaprobe/sim/study"
)

// Decisions is how a grid run decides its criteria: every criterion at
// every n of the grid is one decision, taken from a Monte Carlo interval
// with normal quantile Z. An answer rests on all the decisions made for
// its transform, so the error 1 − Confidence is split equally over them
// (Bonferroni): with probability at least Confidence, every interval
// behind a transform's answer holds the true value of its measure, and
// then every decided verdict is right and the true smallest adequate n of
// the grid lies within the answer's bounds.
type Decisions struct {
	Confidence float64 // family-wise, per transform
	Count      int     // decisions per transform: sample sizes × criteria
	Z          float64 // normal quantile of each interval
}

// GridDecisions is the decision rule of a run of study info.
func GridDecisions(info study.Info) Decisions {
	conf := info.Criteria.Confidence
	if conf == 0 {
		conf = study.DefaultConfidence
	}
	k := max(len(info.SampleSizes)*len(Deciding(info.Criteria)), 1)
	alpha := (1 - conf) / float64(k)
	return Decisions{Confidence: conf, Count: k, Z: normalQuantile(1 - alpha/2)}
}

// Method says the rule in words, for every output that states an answer.
func (d Decisions) Method() string {
	return fmt.Sprintf("each answer holds with family-wise confidence %s: Bonferroni over its %d decisions (sample sizes × criteria), each from a Monte Carlo interval at z = %.3f",
		trimFloat(d.Confidence), d.Count, d.Z)
}

// Deciding lists the criteria that decide under c, in table order.
func Deciding(c study.Criteria) []*Criterion {
	var out []*Criterion
	for _, cr := range criteria {
		if c.Decides(cr.Key) {
			out = append(out, cr)
		}
	}
	return out
}

func normalQuantile(p float64) float64 { return math.Sqrt2 * math.Erfinv(2*p-1) }

func trimFloat(x float64) string { return fmt.Sprint(x) }
