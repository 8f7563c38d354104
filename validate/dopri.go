package validate

import (
	"math"

	"basin.example/fit"
)

// The Dormand–Prince 5(4) tableau (Dormand & Prince, "A family of embedded
// Runge–Kutta formulae", J. Comput. Appl. Math. 6:19-26, 1980).
var (
	dpC = [7]float64{0, 1.0 / 5, 3.0 / 10, 4.0 / 5, 8.0 / 9, 1, 1}
	dpA = [7][6]float64{
		{},
		{1.0 / 5},
		{3.0 / 40, 9.0 / 40},
		{44.0 / 45, -56.0 / 15, 32.0 / 9},
		{19372.0 / 6561, -25360.0 / 2187, 64448.0 / 6561, -212.0 / 729},
		{9017.0 / 3168, -355.0 / 33, 46732.0 / 5247, 49.0 / 176, -5103.0 / 18656},
		{35.0 / 384, 0, 500.0 / 1113, 125.0 / 192, -2187.0 / 6784, 11.0 / 84},
	}
	dpB5 = [7]float64{35.0 / 384, 0, 500.0 / 1113, 125.0 / 192, -2187.0 / 6784, 11.0 / 84, 0}
	dpB4 = [7]float64{5179.0 / 57600, 0, 7571.0 / 16695, 393.0 / 640, -92097.0 / 339200, 187.0 / 2100, 1.0 / 40}
	// dpD are the coefficients of the order-4 continuous extension
	// (dense output) of the same method, as in Hairer, Nørsett & Wanner,
	// Solving Ordinary Differential Equations I, 2nd ed. (1993), §II.6
	// (from memory; checked by the dense-output accuracy test).
	dpD = [7]float64{-12715105075.0 / 11282082432, 0, 87487479700.0 / 32700410799,
		-10690763975.0 / 1880347072, 701980252875.0 / 199316789632,
		-1453857185.0 / 822651844, 69997945.0 / 29380423}
)

// Step-size control constants (Hairer, Nørsett & Wanner §II.4, common
// practice): safety factor, bounds on the step ratio, and the Lund
// stabilisation exponent of the PI controller.
const (
	dpSafety = 0.9
	dpFacMin = 0.2
	dpFacMax = 10
	dpBeta   = 0.04
)

// ODE is the right-hand side of x' = f(t, x): it stores f in dst.
type ODE func(dst []float64, t float64, x []float64)

// DopriOptions controls Integrate. A nil *DopriOptions means defaults.
type DopriOptions struct {
	RelTol float64 // relative tolerance per component; 0 means 1e-6
	AbsTol float64 // absolute tolerance per component; 0 means 1e-9
	// MaxSteps caps accepted plus rejected steps; 0 means 1,000,000.
	MaxSteps int
	// FixedStep, when positive, takes steps of that size with the fifth-
	// order weights and no error control (for tests); 0 means adaptive.
	FixedStep float64
	// MaxNorm stops the integration as diverged when a component's
	// magnitude exceeds it; 0 means 1e12.
	MaxNorm float64
}

// DopriStats reports how an integration went.
type DopriStats struct {
	Steps, Rejected, Evals int
	// Reached is the last time reached; it is the last requested time
	// unless the integration stopped early.
	Reached float64
	// Diverged says the solution left MaxNorm or became non-finite, or
	// the step size collapsed; Reason says which.
	Diverged bool
	Reason   string
}

// Integrate solves x' = f(t, x), x(times[0]) = x0, with the adaptive
// Dormand–Prince 5(4) method and stores x(times[i]) in dst[j][i] (column-
// wise), using the dense output between steps. times must be
// nondecreasing. Entries of dst after an early stop are NaN. It panics on
// a length mismatch. One Integrate allocates its stage buffers once.
func Integrate(f ODE, x0 []float64, times []float64, dst [][]float64, opts *DopriOptions) DopriStats {
	n := len(x0)
	if len(dst) != n {
		panic("validate: Integrate: dst needs one row per state")
	}
	for _, d := range dst {
		if len(d) != len(times) {
			panic("validate: Integrate: dst rows need one entry per time")
		}
	}
	var o DopriOptions
	if opts != nil {
		o = *opts
	}
	if o.RelTol <= 0 {
		o.RelTol = 1e-6
	}
	if o.AbsTol <= 0 {
		o.AbsTol = 1e-9
	}
	if o.MaxSteps <= 0 {
		o.MaxSteps = 1_000_000
	}
	if o.MaxNorm <= 0 {
		o.MaxNorm = 1e12
	}
	var st DopriStats
	if len(times) == 0 {
		return st
	}
	buf := make([]float64, 14*n)
	var k [7][]float64
	for i := range k {
		k[i] = buf[i*n : (i+1)*n]
	}
	x := buf[7*n : 8*n]
	y := buf[8*n : 9*n]
	xn := buf[9*n : 10*n]
	r := [4][]float64{buf[10*n : 11*n], buf[11*n : 12*n], buf[12*n : 13*n], buf[13*n : 14*n]}
	copy(x, x0)
	t := times[0]
	tEnd := times[len(times)-1]
	next := 0
	for next < len(times) && times[next] <= t {
		for j := range dst {
			dst[j][next] = x[j]
		}
		next++
	}
	fail := func(reason string) DopriStats {
		st.Diverged, st.Reason, st.Reached = true, reason, t
		for ; next < len(times); next++ {
			for j := range dst {
				dst[j][next] = math.NaN()
			}
		}
		return st
	}
	if !finiteAll(x) {
		return fail("non-finite start")
	}
	f(k[0], t, x)
	st.Evals++
	h := o.FixedStep
	if h <= 0 {
		h = initialStep(f, t, x, k[0], y, k[1], o)
		st.Evals++
	}
	errOld := 1e-4
	for next < len(times) {
		if st.Steps+st.Rejected >= o.MaxSteps {
			return fail("step limit reached")
		}
		if t+h > tEnd {
			h = tEnd - t
		}
		if tiny := 1e-14 * math.Max(1, math.Abs(t)); h <= tiny {
			if tEnd-t <= tiny {
				// The end, to the rounding of the accumulated time (ten
				// fixed steps of 0.2 stop just short of 2): the remaining
				// requested times are t itself.
				for ; next < len(times); next++ {
					for j := range dst {
						dst[j][next] = x[j]
					}
				}
				break
			}
			return fail("step size collapsed")
		}
		for s := 1; s < 7; s++ {
			for j := 0; j < n; j++ {
				a := 0.0
				for q := 0; q < s; q++ {
					a += dpA[s][q] * k[q][j]
				}
				y[j] = x[j] + h*a
			}
			f(k[s], t+dpC[s]*h, y)
		}
		st.Evals += 6
		// y now holds the fifth-order solution (row 7 of A is b5: FSAL).
		copy(xn, y)
		errN := 0.0
		if o.FixedStep <= 0 {
			for j := 0; j < n; j++ {
				e := 0.0
				for q := 0; q < 7; q++ {
					e += (dpB5[q] - dpB4[q]) * k[q][j]
				}
				e *= h
				sc := o.AbsTol + o.RelTol*math.Max(math.Abs(x[j]), math.Abs(xn[j]))
				errN += (e / sc) * (e / sc)
			}
			errN = math.Sqrt(errN / float64(n))
			if math.IsNaN(errN) {
				errN = math.Inf(1)
			}
		}
		if errN > 1 {
			st.Rejected++
			fac := math.Max(dpFacMin, dpSafety*math.Pow(errN, -0.2))
			if math.IsInf(errN, 1) {
				fac = dpFacMin
			}
			h *= fac
			continue
		}
		// accepted: dense output coefficients, then emit requested times.
		for j := 0; j < n; j++ {
			ydiff := xn[j] - x[j]
			bspl := h*k[0][j] - ydiff
			r[0][j] = ydiff
			r[1][j] = bspl
			r[2][j] = ydiff - h*k[6][j] - bspl
			d := 0.0
			for q := 0; q < 7; q++ {
				d += dpD[q] * k[q][j]
			}
			r[3][j] = h * d
		}
		tn := t + h
		for next < len(times) && times[next] <= tn {
			th := (times[next] - t) / h
			th1 := 1 - th
			for j := 0; j < n; j++ {
				dst[j][next] = x[j] + th*(r[0][j]+th1*(r[1][j]+th*(r[2][j]+th1*r[3][j])))
			}
			next++
		}
		t = tn
		copy(x, xn)
		k[0], k[6] = k[6], k[0] // FSAL: f(t+h, x_new) is the last stage
		st.Steps++
		for _, v := range x {
			if !(math.Abs(v) <= o.MaxNorm) {
				return fail("solution left the bound")
			}
		}
		if o.FixedStep <= 0 {
			// PI step control (Hairer, Nørsett & Wanner §IV.2, Gustafsson).
			e := math.Max(errN, 1e-10)
			fac := dpSafety * math.Pow(e, -(0.2-0.75*dpBeta)) * math.Pow(errOld, dpBeta)
			fac = math.Min(dpFacMax, math.Max(dpFacMin, fac))
			errOld = math.Max(errN, 1e-4)
			h *= fac
		}
	}
	st.Reached = t
	return st
}

// initialStep chooses a first step as in Hairer, Nørsett & Wanner §II.4
// ("starting step size"), using y and f1 as scratch.
func initialStep(f ODE, t float64, x, f0, y, f1 []float64, o DopriOptions) float64 {
	n := len(x)
	d0, d1 := 0.0, 0.0
	for j := 0; j < n; j++ {
		sc := o.AbsTol + o.RelTol*math.Abs(x[j])
		d0 += (x[j] / sc) * (x[j] / sc)
		d1 += (f0[j] / sc) * (f0[j] / sc)
	}
	d0, d1 = math.Sqrt(d0/float64(n)), math.Sqrt(d1/float64(n))
	h0 := 1e-6
	if d0 >= 1e-5 && d1 >= 1e-5 {
		h0 = 0.01 * d0 / d1
	}
	for j := 0; j < n; j++ {
		y[j] = x[j] + h0*f0[j]
	}
	f(f1, t+h0, y)
	d2 := 0.0
	for j := 0; j < n; j++ {
		sc := o.AbsTol + o.RelTol*math.Abs(x[j])
		v := (f1[j] - f0[j]) / sc
		d2 += v * v
	}
	d2 = math.Sqrt(d2/float64(n)) / h0
	var h1 float64
	if math.Max(d1, d2) <= 1e-15 {
		h1 = math.Max(1e-6, h0*1e-3)
	} else {
		h1 = math.Pow(0.01/math.Max(d1, d2), 0.2)
	}
	h := math.Min(100*h0, h1)
	if !(h > 0) || math.IsInf(h, 0) {
		h = 1e-6
	}
	return h
}

func finiteAll(x []float64) bool {
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return false
		}
	}
	return true
}

// Simulate integrates the fitted field of m from x0 with [Integrate] and
// stores x(times[i]) in dst[j][i]. A model that blows up is reported in
// the stats (Diverged), never as a panic.
func Simulate(m *fit.Model, x0, times []float64, dst [][]float64, opts *DopriOptions) DopriStats {
	fe := fit.NewFieldEvaluator(m)
	return Integrate(func(d []float64, _ float64, x []float64) { fe.EvalTo(d, x) }, x0, times, dst, opts)
}
