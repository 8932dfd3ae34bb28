package study_test

import (
	"encoding/json"
	"math"
	"slices"
	"strings"
	"testing"

	"deltaprobe/sim/family"
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

// Censored lifetimes fitted by the other lifetime family: a study
// accepts the pairs family.BuildCensored offers, names θ by the fitted
// family, keeps the censoring and the expected share of events, and
// predicts from the censored misfit's θ* and sandwich (the same numbers
// family.BuildCensored gives; their derivations are tested in
// sim/family/censored_misfit_test.go).
func TestCensoredFitOfOtherFamily(t *testing.T) {
	src := `seed = 1
sample_sizes = [40]
[[arm]]
name = "w"
family = "weibull"
shape = 1.5
scale = 4.0
fit = "exponential"
variance = "robust"
[arm.censoring]
entry = 1.0
end = 3.0
[[arm]]
name = "e"
family = "exponential"
rate = 0.3
fit = "weibull"
[arm.censoring]
dropout_rate = 0.1
[[transform]]
name = "w_rate"
expr = "w.rate"
`
	s, err := study.Parse("censored_fit.toml", []byte(src))
	if err != nil {
		t.Fatal(err)
	}
	if got, want := s.ParamNames(), []string{"w.rate", "e.shape", "e.scale"}; !slices.Equal(got, want) {
		t.Errorf("ParamNames() = %v, want %v", got, want)
	}
	info := s.Info()
	w, e := info.Arms[0], info.Arms[1]
	if w.Fit != "exponential" || w.Censoring == nil || w.Censoring.End != 3 || !(w.EventShare > 0 && w.EventShare < 1) {
		t.Errorf("arm w recorded as %+v", w)
	}
	// P(event) = λ/(λ + δ) = 0.75 for the exponential under dropout only
	// (derived: competing exponentials).
	if e.Fit != "weibull" || math.Abs(e.EventShare-0.75) > 1e-9 {
		t.Errorf("arm e recorded as %+v, want fit weibull, event share 0.75", e)
	}
	weibull, _ := family.Lookup("weibull")
	exponential, _ := family.Lookup("exponential")
	m, err := family.BuildCensored(weibull, map[string]float64{"shape": 1.5, "scale": 4}, family.Censoring{Entry: 1, End: 3}, exponential, family.RobustVariance)
	if err != nil {
		t.Fatal(err)
	}
	cov := []float64{0}
	m.Asymptotics.Cov(m.Truth, cov)
	p := s.Predict(0, 40)
	if p.Truth != m.Truth[0] || math.Abs(p.DeltaVar-cov[0]/40) > 1e-15*p.DeltaVar {
		t.Errorf("prediction %+v, want truth %v and delta_var %v", p, m.Truth[0], cov[0]/40)
	}
	if truth := s.Truth(); truth[1] != 1 || math.Abs(truth[2]-1/0.3) > 1e-15 {
		t.Errorf("θ* of the weibull fit of exponential lifetimes = %v, want (1, 1/0.3)", truth[1:])
	}
}
