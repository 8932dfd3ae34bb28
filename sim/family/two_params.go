package family

// twoVariances is what a fitter of two parameters keeps when it computes
// both plug-in variances in one pass, the model-based one (the inverse
// observed information) and the robust one (the sandwich): which of them
// the study chose, and the other, for OtherVariance. Fitters embed it.
type twoVariances struct {
	robust bool       // the study's variance is the sandwich
	both   bool       // also keep the other variance (EnableOther)
	other  [4]float64 // the other variance of the latest fit, row-major
}

func (v *twoVariances) EnableOther() { v.both = true }

func (v *twoVariances) OtherCov(cov []float64) bool {
	copy(cov, v.other[:])
	return v.both
}

// keep writes the chosen variance into cov and keeps the other.
func (v *twoVariances) keep(cov []float64, model, sand [4]float64) {
	if v.robust {
		copy(cov, sand[:])
		v.other = model
	} else {
		copy(cov, model[:])
		v.other = sand
	}
}

// sandwich2 writes K·B·K for a symmetric 2×2 K (row-major) and
// B = [b11, b12; b12, b22].
func sandwich2(k []float64, b11, b12, b22 float64, out []float64) {
	r00 := k[0]*b11 + k[1]*b12
	r01 := k[0]*b12 + k[1]*b22
	r10 := k[2]*b11 + k[3]*b12
	r11 := k[2]*b12 + k[3]*b22
	out[0] = r00*k[0] + r01*k[2]
	out[1] = r00*k[1] + r01*k[3]
	out[2] = r10*k[0] + r11*k[2]
	out[3] = r10*k[1] + r11*k[3]
}
