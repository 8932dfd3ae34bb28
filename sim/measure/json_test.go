package measure

import (
	"encoding/json"
	"math"
	"testing"
)

// A saved row reads back to the same bits: plan.json must rebuild plan.csv
// byte for byte, so NaN (a missing measure) and infinities survive too.
func TestRowJSONRoundTrip(t *testing.T) {
	r := NewRow("log_or", 40)
	r.Verdict = Fail
	vals := []float64{0.1 + 0.2, math.Inf(1), math.Inf(-1), -0.0, 5e-324, math.MaxFloat64, 1.0 / 3}
	for i := range r.Values {
		if i < len(vals) {
			r.Values[i] = vals[i]
		}
	}
	r.Checks[0] = Check{Low: 0.91, High: math.Inf(1), Band: [2]float64{0.925, 0.975}, Verdict: Unclear}
	b, err := json.Marshal(r)
	if err != nil {
		t.Fatal(err)
	}
	var back Row
	if err := json.Unmarshal(b, &back); err != nil {
		t.Fatal(err)
	}
	if back.Transform != r.Transform || back.N != r.N || back.Verdict != r.Verdict {
		t.Errorf("identity %q %d %s, want %q %d %s", back.Transform, back.N, back.Verdict, r.Transform, r.N, r.Verdict)
	}
	for i, m := range Measures() {
		if math.Float64bits(back.Values[i]) != math.Float64bits(r.Values[i]) && !(math.IsNaN(back.Values[i]) && math.IsNaN(r.Values[i])) {
			t.Errorf("%s: %v read back as %v", m.Name, r.Values[i], back.Values[i])
		}
	}
	for i, c := range Criteria() {
		a, b := r.Checks[i], back.Checks[i]
		same := func(x, y float64) bool { return x == y || math.IsNaN(x) && math.IsNaN(y) }
		if !same(a.Low, b.Low) || !same(a.High, b.High) || a.Band != b.Band || a.Verdict != b.Verdict {
			t.Errorf("%s check %+v read back as %+v", c.Name, a, b)
		}
	}
}
