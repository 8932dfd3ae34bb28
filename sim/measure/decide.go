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

// PlanDecisions is how a plan decides. A plan's bracket [n_low, n_high]
// on the smallest adequate n rests on the decisions at two sample sizes:
// every criterion passing at n_high, and a criterion failing at
// n_low − 1 (none when n_low is the lowest n searched), 2 × deciding
// criteria decisions in all; an adequate answer is a bracket that closes.
// Each decision's error is split again over
// the looks its n may take (repeated looks at growing replicates).
//
// Unless [plan] confidence sets each decision's confidence, it is chosen
// so that the decisions behind an answer hold together with the family-
// wise confidence of [criteria] (Bonferroni); when it is set, the
// family-wise confidence that follows is stated instead.
type PlanDecisions struct {
	Confidence float64 // family-wise, of each answer's decisions; may be ≤ 0 (no useful bound)
	Each       float64 // of each decision, over all its looks
	Given      bool    // Each came from [plan] confidence
	Count      int     // decisions behind an answer: 2 × criteria
	Looks      int     // the most looks at one n
	Z          float64 // normal quantile of each look's interval
}

// PlanRule is the decision rule of a plan of study info with spec.
func PlanRule(info study.Info, spec study.PlanSpec) PlanDecisions {
	d := PlanDecisions{Count: 2 * max(len(Deciding(info.Criteria)), 1), Looks: spec.Looks()}
	conf := info.Criteria.Confidence
	if conf == 0 {
		conf = study.DefaultConfidence
	}
	if spec.Confidence > 0 {
		d.Each, d.Given = spec.Confidence, true
		d.Confidence = 1 - float64(d.Count)*(1-d.Each)
	} else {
		d.Confidence = conf
		d.Each = 1 - (1-conf)/float64(d.Count)
	}
	alpha := (1 - d.Each) / float64(d.Looks)
	d.Z = normalQuantile(1 - alpha/2)
	return d
}

// Method says the rule in words, for every output of a plan.
func (d PlanDecisions) Method() string {
	rests := fmt.Sprintf("the %d decisions that bound an answer (every criterion passing at n_high, one failing just below n_low)", d.Count)
	looks := fmt.Sprintf("split again over up to %d looks per n (z = %.3f per look)", d.Looks, d.Z)
	each := trimFloat(roundTo(d.Each, 6))
	if !d.Given {
		return fmt.Sprintf("each answer holds with family-wise confidence %s: Bonferroni over %s, each at confidence %s, %s",
			trimFloat(d.Confidence), rests, each, looks)
	}
	bound := "gives no useful family-wise bound"
	if d.Confidence > 0 {
		bound = "gives each answer family-wise confidence " + trimFloat(roundTo(d.Confidence, 6))
	}
	return fmt.Sprintf("each decision at confidence %s ([plan] confidence), %s; Bonferroni over %s %s", each, looks, rests, bound)
}

func roundTo(x float64, digits int) float64 {
	p := math.Pow(10, float64(digits))
	return math.Round(x*p) / p
}
