package model_test

import (
	"fmt"

	"bellcheck/engine/model"
)

func ExampleParse() {
	m, err := model.Parse("k = [3, 5, 2]\nparam rate in [0, inf]\nld_gamma(rate, 2, 0.5) + sum(ld_poisson(k, rate))")
	if err != nil {
		fmt.Println(err)
		return
	}
	for _, p := range m.Params {
		fmt.Println(p.Name, p.Lo, p.Hi)
	}
	fmt.Println(m.Defs[0].Name, m.Defs[0].Shape.Len, m.Form)
	// Output:
	// rate 0 +Inf
	// k 3 log_density
}

func ExampleError_Detail() {
	src := "mu = 2\nld_normal(x, mu)"
	_, err := model.Parse(src)
	fmt.Println(model.Detail(err, src))
	// Output:
	// 2:1: wrong number of arguments for ld_normal: got 2, want 3
	//     ld_normal(x, mu)
	//     ^
	// hint: ld_normal takes 3 arguments (x, mean, sd), got 2
}

func ExampleFormat() {
	m, _ := model.Parse("# a comment\ncost ((a-1)^2)+(b*(2))  ;  param b in [-inf,1e1]")
	fmt.Print(model.Format(m))
	// Output:
	// cost (a - 1)^2 + b*2
	// param b in [-inf, 10]
}
