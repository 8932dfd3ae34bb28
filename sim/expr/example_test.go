package expr_test

import (
	"fmt"

	"deltaprobe/sim/expr"
)

func Example() {
	prog, err := expr.Compile("log(a.p/(1-a.p)) - log(b.p/(1-b.p))", []string{"a.p", "b.p"})
	if err != nil {
		fmt.Println(err)
		return
	}
	ev := prog.NewEvaluator()
	grad := make([]float64, prog.Dim())
	v := ev.ValueGrad([]float64{0.3, 0.2}, grad)
	fmt.Printf("log odds ratio %.6f, gradient (%.6f, %.6f)\n", v, grad[0], grad[1])

	_, err = expr.Compile("log(a.q/(1-a.p))", []string{"a.p", "b.p"})
	fmt.Println(err)
	// Output:
	// log odds ratio 0.538997, gradient (4.761905, -6.250000)
	// column 5: unknown name "a.q"; did you mean "a.p"? known names: a.p, b.p
}
