package report

import (
	"math"

	"gonum.org/v1/plot"

	"basin.example/cmd/basin/internal/human"
)

// linTicks marks a linear axis at multiples of a round step (1, 2 or 5
// times a power of ten), so that 0 is always a major tick when it is in
// range, and labels each to the step's resolution: no 0.30000000000000004.
type linTicks struct{}

func (linTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(hi > lo) || math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return nil
	}
	step, minors := niceStep((hi - lo) / 5)
	var out []plot.Tick
	first := math.Ceil(lo/step - 1e-9)
	for k := first; k*step <= hi+1e-9*step; k++ {
		v := k * step
		if math.Abs(v) < 1e-9*step {
			v = 0
		}
		out = append(out, plot.Tick{Value: v, Label: human.Res(v, step)})
	}
	ms := step / float64(minors)
	for k := math.Ceil(lo / ms); k*ms <= hi; k++ {
		if math.Mod(math.Abs(k), float64(minors)) != 0 {
			out = append(out, plot.Tick{Value: k * ms})
		}
	}
	return out
}

// niceStep returns the round step at or above raw and how many minor
// intervals split it.
func niceStep(raw float64) (float64, int) {
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	switch f := raw / p; {
	case f <= 1:
		return p, 5
	case f <= 2:
		return 2 * p, 4
	case f <= 5:
		return 5 * p, 5
	}
	return 10 * p, 5
}

// logTicks marks a log axis at the powers of ten, labelled plainly
// ("0.0001", "1", "1000"; "1e-6" past four decimals), with minor ticks
// at 2..9 times each; over many decades only every second or third power
// is labelled.
type logTicks struct{}

func (logTicks) Ticks(lo, hi float64) []plot.Tick {
	if !(lo > 0) || !(hi > lo) || math.IsInf(hi, 0) {
		return nil
	}
	k0, k1 := int(math.Floor(math.Log10(lo))), int(math.Ceil(math.Log10(hi)))
	every := max(1, (k1-k0+9)/10)
	var out []plot.Tick
	for k := k0; k <= k1; k++ {
		p := math.Pow(10, float64(k))
		if p >= lo*(1-1e-12) && p <= hi*(1+1e-12) {
			t := plot.Tick{Value: p}
			if (k-k0)%every == 0 {
				t.Label = human.Num(p)
			}
			out = append(out, t)
		}
		if every == 1 {
			for m := 2; m <= 9; m++ {
				if v := float64(m) * p; v >= lo && v <= hi {
					out = append(out, plot.Tick{Value: v})
				}
			}
		}
	}
	return out
}
