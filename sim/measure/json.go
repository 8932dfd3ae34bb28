package measure

import (
	"encoding/json"
	"fmt"
	"math"
	"strconv"
)

// number is a float64 in JSON that keeps every value: finite ones as
// JSON numbers (shortest form, which parses back to the same bits), NaN
// (a measure with no value) as null, and infinities as "Inf" and "-Inf".
type number float64

func (x number) MarshalJSON() ([]byte, error) {
	f := float64(x)
	switch {
	case math.IsNaN(f):
		return []byte("null"), nil
	case math.IsInf(f, 1):
		return []byte(`"Inf"`), nil
	case math.IsInf(f, -1):
		return []byte(`"-Inf"`), nil
	}
	return strconv.AppendFloat(nil, f, 'g', -1, 64), nil
}

func (x *number) UnmarshalJSON(b []byte) error {
	switch string(b) {
	case "null":
		*x = number(math.NaN())
		return nil
	case `"Inf"`:
		*x = number(math.Inf(1))
		return nil
	case `"-Inf"`:
		*x = number(math.Inf(-1))
		return nil
	}
	f, err := strconv.ParseFloat(string(b), 64)
	if err != nil {
		return fmt.Errorf("not a number: %s", b)
	}
	*x = number(f)
	return nil
}

// rowJSON is a row's saved form: measures and checks keyed by name, so a
// saved row still reads after measures are added (they are then missing).
type rowJSON struct {
	Transform string               `json:"transform"`
	N         int                  `json:"n"`
	Values    map[string]number    `json:"values"`
	Checks    map[string]checkJSON `json:"checks"`
	Verdict   Verdict              `json:"verdict"`
}

type checkJSON struct {
	Low      number     `json:"low"`
	High     number     `json:"high"`
	Band     [2]float64 `json:"band"`
	Verdict  Verdict    `json:"verdict"`
	Advisory bool       `json:"advisory,omitempty"`
}

// MarshalJSON writes the row with its measures and checks by name.
func (r Row) MarshalJSON() ([]byte, error) {
	out := rowJSON{Transform: r.Transform, N: r.N, Verdict: r.Verdict,
		Values: map[string]number{}, Checks: map[string]checkJSON{}}
	for i, m := range table {
		if i < len(r.Values) {
			out.Values[m.Name] = number(r.Values[i])
		}
	}
	for i, c := range criteria {
		if i < len(r.Checks) {
			ch := r.Checks[i]
			out.Checks[c.Name] = checkJSON{Low: number(ch.Low), High: number(ch.High), Band: ch.Band, Verdict: ch.Verdict, Advisory: ch.Advisory}
		}
	}
	return json.Marshal(out)
}

// UnmarshalJSON reads the form MarshalJSON writes; a measure or check
// the file lacks is missing (NaN, unclear).
func (r *Row) UnmarshalJSON(b []byte) error {
	var in rowJSON
	if err := json.Unmarshal(b, &in); err != nil {
		return err
	}
	*r = NewRow(in.Transform, in.N)
	r.Verdict = in.Verdict
	for i, m := range table {
		if v, ok := in.Values[m.Name]; ok {
			r.Values[i] = float64(v)
		}
	}
	for i, c := range criteria {
		if ch, ok := in.Checks[c.Name]; ok {
			r.Checks[i] = Check{Low: float64(ch.Low), High: float64(ch.High), Band: ch.Band, Verdict: ch.Verdict, Advisory: ch.Advisory}
		}
	}
	return nil
}
