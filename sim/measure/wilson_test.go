package measure

import (
	"math"
	"testing"
)

func TestWilsonInterval(t *testing.T) {
	// Worked from Wilson's (1927) formula by hand: 95 of 100, z = 1.96.
	lo, hi := wilson(95, 100, mcZ)
	if math.Abs(lo-0.8882) > 5e-4 || math.Abs(hi-0.9785) > 5e-4 {
		t.Errorf("wilson(95, 100, mcZ) = [%v, %v], want about [0.8882, 0.9785]", lo, hi)
	}
	lo, hi = wilson(0, 50, mcZ)
	if lo != 0 || hi <= 0 || hi > 0.1 {
		t.Errorf("wilson(0, 50, mcZ) = [%v, %v]", lo, hi)
	}
}
