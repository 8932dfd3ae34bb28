package measure

import (
	"slices"
	"testing"
)

// The order of the tables is a contract relied on outside the code:
// summary.csv's columns and verdicts.csv's n_NAME columns, as the README
// lists them and cmd/deltaprobe's golden files hold them.
func TestTableOrder(t *testing.T) {
	var columns, internal []string
	for i, m := range Measures() {
		if m.index != i {
			t.Errorf("measure %s has index %d at place %d", m.Name, m.index, i)
		}
		if m.Group == Internal {
			internal = append(internal, m.Name)
		} else {
			columns = append(columns, m.Name)
		}
	}
	want := []string{"n_total", "replicates", "undefined", "truth", "mean", "bias", "bias_mcse",
		"rel_bias", "std_bias", "bias_2nd", "emp_var", "emp_var_mcse", "delta_var",
		"var_ratio", "var_ratio_mcse", "plugin_var", "plugin_ratio", "coverage",
		"coverage_mcse", "miss_below", "miss_above", "iqr_sd", "skewness",
		"ex_kurtosis", "ks_pivot", "coverage_defined", "width", "width_delta",
		"null", "reject", "reject_mcse", "reject_delta", "events"}
	if !slices.Equal(columns, want) {
		t.Errorf("summary measures\n%q\nwant\n%q", columns, want)
	}
	if want := []string{"std_bias_mcse", "plugin_ratio_mcse", "plugin_other_ratio", "fit_failures", "no_events", "zero_se"}; !slices.Equal(internal, want) {
		t.Errorf("internal measures %q, want %q", internal, want)
	}
	var names []string
	for i, c := range Criteria() {
		if c.index != i {
			t.Errorf("criterion %s has index %d at place %d", c.Name, c.index, i)
		}
		names = append(names, c.Name)
		if c.Measure == nil || c.MCSE == nil || c.Band == nil || c.Interval == nil || c.Ideal == nil {
			t.Errorf("criterion %s is incomplete", c.Name)
		}
		if c.Below == "" || c.Above == "" || c.Unclear == "" || c.Title == "" || c.Noun == "" || c.Rule == "" {
			t.Errorf("criterion %s lacks words", c.Name)
		}
	}
	if want := []string{"coverage", "variance", "bias", "plugin", "power"}; !slices.Equal(names, want) {
		t.Errorf("criteria %q, want %q", names, want)
	}
}
