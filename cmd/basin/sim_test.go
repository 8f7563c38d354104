package main

// rk4Step advances x by one classical Runge–Kutta step of size h under
// dx/dt = f(x), in place (the test data generators' integrator).
func rk4Step(f func([]float64) []float64, x []float64, h float64) {
	k1 := f(x)
	tmp := make([]float64, len(x))
	stage := func(k []float64, c float64) []float64 {
		for j := range x {
			tmp[j] = x[j] + c*h*k[j]
		}
		return f(tmp)
	}
	k2 := stage(k1, 0.5)
	k3 := stage(k2, 0.5)
	k4 := stage(k3, 1)
	for j := range x {
		x[j] += h / 6 * (k1[j] + 2*k2[j] + 2*k3[j] + k4[j])
	}
}
