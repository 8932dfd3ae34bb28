package report

import (
	"context"
	"fmt"
	"os"
	"testing"

	"deltaprobe/sim"
)

func TestZZDebugPlan(t *testing.T) {
	for _, f := range []string{"../studies/pump_seals.toml", "../studies/ward_infections.toml"} {
		s, err := sim.Load(f)
		if err != nil {
			t.Fatal(err)
		}
		p, err := sim.Plan(context.Background(), s, 0, sim.Options{Workers: 2})
		if err != nil {
			t.Fatal(err)
		}
		figs, err := PlanFigures(s, p)
		if err != nil {
			t.Fatal(err)
		}
		for _, g := range figs { os.WriteFile("/tmp/dbg-"+g.File, g.PNG, 0o644) }
		fmt.Println(figs[0].Width, figs[0].Height)
	}
}
