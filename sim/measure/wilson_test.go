package measure

import (
	"math"
	"testing"
)

func TestWilsonInterval(t *testing.T) {
	// Worked from Wilson's (1927) formula by hand: 95 of 100, z = 1.96.
	lo, hi := wilson(95, 100, z95)
	if math.Abs(lo-0.8882) > 5e-4 || math.Abs(hi-0.9785) > 5e-4 {
		t.Errorf("wilson(95, 100, z95) = [%v, %v], want about [0.8882, 0.9785]", lo, hi)
	}
	lo, hi = wilson(0, 50, z95)
	if lo != 0 || hi <= 0 || hi > 0.1 {
		t.Errorf("wilson(0, 50, z95) = [%v, %v]", lo, hi)
	}
}

// z95 is Φ⁻¹(0.975), the quantile of a two-sided 95% interval.
const z95 = 1.959963984540054
