package report

import (
	"bytes"
	"encoding/csv"
	"math"
	"strconv"
	"testing"

	"deltaprobe/sim/measure"
)

// TestCSVNumbersRoundTrip reads back every number of summary.csv and
// plan.csv made from the stored results: each must parse to exactly the
// float64 (or count) the measure row holds, bit for bit.
func TestCSVNumbersRoundTrip(t *testing.T) {
	type file struct {
		name string
		csv  []byte
		rows []measure.Row
		skip int // leading columns that are not measures
	}
	var files []file
	for _, dir := range storedRuns {
		rows := measure.Summarize(storedRun(t, dir))
		files = append(files, file{dir + "/summary.csv", SummaryCSV(rows), rows, 2})
	}
	for _, c := range storedPlans {
		_, p := storedPlan(t, c.dir)
		files = append(files, file{c.dir + "/plan.csv", PlanCSV(p), stepRows(p.Steps), 4})
	}
	byName := map[string]*measure.Measure{}
	for _, m := range measure.Measures() {
		byName[m.Name] = m
	}
	for _, f := range files {
		t.Run(f.name, func(t *testing.T) {
			records, err := csv.NewReader(bytes.NewReader(f.csv)).ReadAll()
			if err != nil {
				t.Fatal(err)
			}
			header, records := records[0], records[1:]
			if len(records) != len(f.rows) || len(records) == 0 {
				t.Fatalf("%d records for %d rows", len(records), len(f.rows))
			}
			checked := 0
			for i, rec := range records {
				for j := f.skip; j < len(header)-1; j++ {
					m := byName[header[j]]
					if m == nil {
						t.Fatalf("column %s is no measure", header[j])
					}
					checked++
					if m.Count {
						if want := strconv.FormatInt(f.rows[i].Count(m), 10); rec[j] != want {
							t.Errorf("row %d %s: %q, want %s", i, m.Name, rec[j], want)
						}
						continue
					}
					want := f.rows[i].Get(m)
					got, err := parseCSVFloat(rec[j])
					if err != nil {
						t.Errorf("row %d %s: %v", i, m.Name, err)
					} else if math.Float64bits(got) != math.Float64bits(want) && !(math.IsNaN(got) && math.IsNaN(want)) {
						t.Errorf("row %d %s: %q reads as %v, the row holds %v", i, m.Name, rec[j], got, want)
					}
				}
			}
			if checked == 0 {
				t.Fatal("no number checked")
			}
		})
	}
}

// parseCSVFloat reads a number as csvFloat writes it.
func parseCSVFloat(s string) (float64, error) {
	switch s {
	case "":
		return math.NaN(), nil
	case "Inf":
		return math.Inf(1), nil
	case "-Inf":
		return math.Inf(-1), nil
	}
	return strconv.ParseFloat(s, 64)
}

func TestCSVFloat(t *testing.T) {
	for _, c := range []struct {
		x    float64
		want string
	}{
		{math.NaN(), ""},
		{math.Inf(1), "Inf"},
		{math.Inf(-1), "-Inf"},
		{0, "0"},
		{0.1, "0.1"},
		{1.0 / 3, "0.3333333333333333"},
		{math.Nextafter(0.3, 1), "0.30000000000000004"},
		{-2.5e-17, "-2.5e-17"},
		{123456789012, "1.23456789012e+11"},
	} {
		if got := csvFloat(c.x); got != c.want {
			t.Errorf("csvFloat(%v) = %q, want %q", c.x, got, c.want)
		}
	}
}
