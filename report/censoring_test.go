package report

import (
	"bytes"
	"strings"
	"testing"

	"deltaprobe/sim/family"
	"deltaprobe/sim/measure"
	"deltaprobe/sim/study"
)

// A study of censored lifetimes says how each arm is censored and the
// share of events expected at the truth wherever it describes the
// study: predict's table, the page, and the trends figure's subtitle;
// summary.csv and the page's table carry the simulated share (events).
func TestCensoringInWords(t *testing.T) {
	r := storedRun(t, "run-censored")
	// The stored study: control enters over [0, 2], ends at 4, drops out
	// at 0.1; treated all enter at 0 and end at 4 (study.toml).
	wantControl := "control: entry uniform over [0, 2], study ends at 4 (follow-up 2 to 4); loss to follow-up at rate 0.1; expected share of events"
	wantTreated := "treated: all enter at 0, study ends at 4; expected share of events 0.551"
	// 0.551 = 1 − e^(−0.2·4) (derived: P(T ≤ end) for rate 0.2).
	note := censoringNote(r.Study)
	for _, want := range []string{wantControl, wantTreated} {
		if !strings.Contains(note, want) {
			t.Errorf("censoring note %q lacks %q", note, want)
		}
	}
	if got := censoringNote(storedRun(t, "run-small").Study); got != "" {
		t.Errorf("an uncensored study has the censoring note %q", got)
	}

	var predict bytes.Buffer
	PredictTable(&predict, r)
	if flat := strings.Join(strings.Fields(predict.String()), " "); !strings.Contains(flat, wantTreated) {
		t.Errorf("predict's notes lack %q:\n%s", wantTreated, predict.String())
	}

	page, err := Page(r, nil)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"Censoring", wantControl, wantTreated, "observed information", ">events<"} {
		if !bytes.Contains(page, []byte(want)) {
			t.Errorf("the page lacks %q", want)
		}
	}

	rows := measure.Summarize(r)
	vs := measure.Verdicts(rows)
	if sub := trendsSubtitle(r, 0, vs[0]); !strings.Contains(sub, wantTreated) {
		t.Errorf("trends subtitle %q lacks %q", sub, wantTreated)
	}

	lines := strings.Split(strings.TrimSpace(string(SummaryCSV(rows))), "\n")
	head := strings.Split(lines[0], ",")
	if len(head) < 2 || head[len(head)-2] != "events" || head[len(head)-1] != "verdict" {
		t.Fatalf("summary.csv ends with %q, want events, verdict", head[max(0, len(head)-2):])
	}
	for _, row := range rows {
		if e := row.Get(measure.Events); !(e > 0.3 && e < 0.7) {
			t.Errorf("n=%d: events %v, not near the arms' expected shares (0.36 to 0.55)", row.N, e)
		}
	}
}

// A censored arm fitted by another family is described as such: the
// predictions use the sandwich at θ*, not the expected information alone;
// a censored arm of its own fit keeps the words it had.
func TestCensoredMisfitWords(t *testing.T) {
	c := &family.Censoring{End: 3}
	own := study.Info{Arms: []study.ArmInfo{{Family: "weibull", Censoring: c, EventShare: 0.5}}}
	other := study.Info{Arms: []study.ArmInfo{{Family: "weibull", Fit: "exponential", Censoring: c, EventShare: 0.5}}}
	uncensored := study.Info{Arms: []study.ArmInfo{{Family: "weibull", Fit: "exponential"}}}
	if censoredMisfit(own) || censoredMisfit(uncensored) || !censoredMisfit(other) {
		t.Errorf("censoredMisfit: own %v, uncensored %v, other %v; want false, false, true", censoredMisfit(own), censoredMisfit(uncensored), censoredMisfit(other))
	}
	if got := censoredPredictionWords(own); got != "the expected information under this censoring" {
		t.Errorf("own fit: %q", got)
	}
	if got := censoredPredictionWords(other); got != "the sandwich at θ* with expectations under the data law and this censoring" {
		t.Errorf("other family's fit: %q", got)
	}
	both := study.Info{Arms: append(append([]study.ArmInfo(nil), own.Arms...), other.Arms...)}
	if got := censoredPredictionWords(both); !strings.HasPrefix(got, "the expected information under this censoring (for a fit of another family, the sandwich at θ*") {
		t.Errorf("both kinds of arm: %q", got)
	}
}
