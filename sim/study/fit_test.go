package study_test

import (
	"encoding/json"
	"math"
	"slices"
	"strings"
	"testing"

	"deltaprobe/sim/study"
)

// The fit and variance keys: θ is named by the fitted family, the record
// keeps what was asked, and a study without the keys records exactly what
// it did before they existed.
func TestFitKeys(t *testing.T) {
	src := `seed = 1
sample_sizes = [20]
[[arm]]
name = "a"
family = "negative_binomial"
mean = 4.0
dispersion = 0.5
fit = "poisson"
variance = "robust"
[[arm]]
name = "b"
family = "normal"
mean = 1.0
sd = 2.0
[[transform]]
name = "ratio"
expr = "a.mean / b.mean"
`
	s, err := study.Parse("fit.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	if got, want := s.ParamNames(), []string{"a.mean", "b.mean", "b.sd"}; !slices.Equal(got, want) {
		t.Errorf("ParamNames() = %v, want %v (the fitted families' names)", got, want)
	}
	info := s.Info()
	if a := info.Arms[0]; a.Fit != "poisson" || a.Variance != "robust" || !a.Robust() || a.FitFamily() != "poisson" {
		t.Errorf("arm a recorded as %+v", a)
	}
	if b := info.Arms[1]; b.Fit != "" || b.Variance != "" || b.FitFamily() != "normal" {
		t.Errorf("arm b recorded as %+v, want no fit or variance", b)
	}
	if !info.Misspecified() {
		t.Error("Misspecified() = false with a poisson fit of negative binomial data")
	}
	raw, err := json.Marshal(info.Arms[1])
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(string(raw), "fit") || strings.Contains(string(raw), "variance") {
		t.Errorf("an arm without the keys is saved as %s", raw)
	}
	// (μ + kμ²)/n / 1² for a.mean, plus b's share μa²/μb⁴·σb²/n.
	p := s.Predict(0, 20)
	want := (4+0.5*16)/20.0 + 16*4/20.0
	if math.Abs(p.DeltaVar-want) > 1e-14*want {
		t.Errorf("delta_var = %.17g, want %.17g (derived)", p.DeltaVar, want)
	}
}

// A second-order bias that is not available is saved as null and read
// back as NaN; any other value round-trips.
func TestPredictionJSONNotAvailable(t *testing.T) {
	for _, p := range []study.Prediction{{Truth: 1, DeltaVar: 0.5, Bias2nd: math.NaN()}, {Truth: 1, DeltaVar: 0.5, Bias2nd: -0.25}} {
		raw, err := json.Marshal(p)
		if err != nil {
			t.Fatal(err)
		}
		var back study.Prediction
		if err := json.Unmarshal(raw, &back); err != nil {
			t.Fatal(err)
		}
		same := back.Bias2nd == p.Bias2nd || math.IsNaN(back.Bias2nd) && math.IsNaN(p.Bias2nd)
		if !same || back.Truth != p.Truth || back.DeltaVar != p.DeltaVar {
			t.Errorf("%+v saved as %s, read back as %+v", p, raw, back)
		}
	}
	raw, _ := json.Marshal(study.Prediction{Bias2nd: math.NaN()})
	if !strings.Contains(string(raw), `"bias_2nd":null`) {
		t.Errorf("NaN bias saved as %s, want null", raw)
	}
}

// A transform reading only parameters whose bias is known keeps its
// second-order bias; one reading the negative binomial's dispersion, whose
// bias is not derived, gets NaN (empty), never a number.
func TestBias2ndNotAvailable(t *testing.T) {
	src := `seed = 1
sample_sizes = [20]
[model]
family = "negative_binomial"
mean = 4.0
dispersion = 0.5
[[transform]]
name = "log_mean"
expr = "log(mean)"
[[transform]]
name = "k"
expr = "dispersion"
`
	s, err := study.Parse("nb.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	// ½·H·Σ/n with H = −1/μ², Σ = μ + kμ² (derived).
	if got, want := s.Predict(0, 20).Bias2nd, -0.5*(4+0.5*16)/16/20; math.Abs(got-want) > 1e-15 {
		t.Errorf("log_mean bias_2nd = %v, want %v", got, want)
	}
	if got := s.Predict(1, 20).Bias2nd; !math.IsNaN(got) {
		t.Errorf("dispersion bias_2nd = %v, want NaN (not available)", got)
	}
}
