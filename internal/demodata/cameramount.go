// Package demodata generates basin's demo data set: an invented
// pitch-stabilised camera mount on a vibration rig.
//
// # The scenario
//
// A camera sits on a pitch gimbal whose centring spring softens as it
// deflects (flexure hinges lose stiffness at large angles). With pitch angle
// theta [rad] and pitch rate omega [rad/s],
//
//	J theta'' = -K (theta - Trim) + K3 (theta - Trim)^3 - C theta'
//
// The default [Params] give a natural frequency of 1.51 Hz, a damping ratio
// of 0.150 and saddle points at Trim ± sqrt(K/K3) = ±0.346 rad: the upright
// position is stable, but only within a bounded basin. A disturbance that
// carries the mount past a saddle sends it to its end stop (|theta| >=
// EndStop, 0.8 rad by default), where the log ends.
//
// Each run starts from a disturbance: either a kick (an initial angle and
// rate, as from a tap or a hand release) or a short vibration burst of the
// rig (a sinusoidal torque near resonance, 0.4 to 1.2 s long) that the
// logger does not record: it is triggered when the shaker stops, so every
// logged run is a free response of the autonomous system. Kicks that stay
// inside are drawn with mechanical energy below the saddles' (so they stay
// inside by construction); the leaving runs are drawn above it and kept
// only if the simulation reaches the end stop. The truth is therefore known
// per run ([Run.Leaves]).
//
// The motion is integrated by the classical fourth-order Runge–Kutta method
// with a step of at most 0.1 ms and sampled at 200 Hz with 20 µs (rms)
// timing jitter; the logged time stamps are the jittered sample times
// rounded to 1 µs. The encoder angle carries 0.5 mrad and the gyro rate
// 5 mrad/s of white Gaussian noise.
//
// Everything is deterministic from the seed: [Generate] draws from
// rand.New(rand.NewPCG(seed, 0)) only, and the CSV writers format numbers
// with strconv, so the same seed gives the same bytes.
package demodata

import (
	"errors"
	"fmt"
	"math"
	"math/rand/v2"
)

// Params are the mount's physical constants, in SI units.
type Params struct {
	J    float64 `json:"J_kg_m2"`       // pitch inertia, kg m^2
	K    float64 `json:"K_N_m_per_rad"` // linear centring stiffness, N m/rad
	K3   float64 `json:"K3_N_m_per_rad3"`
	C    float64 `json:"C_N_m_s_per_rad"` // viscous damping, N m s/rad
	Trim float64 `json:"trim_rad"`        // angle of the upright equilibrium, rad
}

// DefaultParams returns the demo mount: J = 2.0e-3 kg m^2, K = 0.18 N m/rad,
// K3 = 1.5 N m/rad^3, C = 5.7e-3 N m s/rad, Trim = 0.
func DefaultParams() Params {
	return Params{J: 2.0e-3, K: 0.18, K3: 1.5, C: 5.7e-3, Trim: 0}
}

// NaturalFrequency returns sqrt(K/J)/(2 pi), in Hz.
func (p Params) NaturalFrequency() float64 { return math.Sqrt(p.K/p.J) / (2 * math.Pi) }

// DampingRatio returns C / (2 sqrt(K J)).
func (p Params) DampingRatio() float64 { return p.C / (2 * math.Sqrt(p.K*p.J)) }

// SaddleOffset returns sqrt(K/K3), the saddles' distance from Trim in rad,
// or +Inf when K3 <= 0 (no saddles).
func (p Params) SaddleOffset() float64 {
	if p.K3 <= 0 {
		return math.Inf(1)
	}
	return math.Sqrt(p.K / p.K3)
}

// Energy returns the mechanical energy J omega^2/2 + K d^2/2 - K3 d^4/4,
// d = theta - Trim, in J. Along a free run dE/dt = -C omega^2 <= 0.
func (p Params) Energy(theta, omega float64) float64 {
	d := theta - p.Trim
	return 0.5*p.J*omega*omega + 0.5*p.K*d*d - 0.25*p.K3*d*d*d*d
}

// SaddleEnergy returns the energy at the saddles, K^2/(4 K3), in J. A free
// run with Energy below it and |theta - Trim| below SaddleOffset stays in
// that set forever.
func (p Params) SaddleEnergy() float64 {
	if p.K3 <= 0 {
		return math.Inf(1)
	}
	return p.K * p.K / (4 * p.K3)
}

// barrier returns the angle offset and energy that bound the basin inside
// the stops: the saddles when they lie inside the stops, else the stops.
func barrier(s *Options) (offset, energy float64) {
	p := *s.Params
	d := min(p.SaddleOffset(), s.EndStop)
	return d, p.Energy(p.Trim+d, 0)
}

// Accel returns theta” in rad/s^2 for the state (theta, omega) under an
// external torque tau in N m.
func (p Params) Accel(theta, omega, tau float64) float64 {
	d := theta - p.Trim
	return (-p.K*d + p.K3*d*d*d - p.C*omega + tau) / p.J
}

// Step advances the state by one classical Runge–Kutta step of length h
// under the torque tau(t) (nil means none) and returns the new state.
func (p Params) Step(theta, omega, t, h float64, tau func(float64) float64) (float64, float64) {
	f := func(t float64) float64 {
		if tau == nil {
			return 0
		}
		return tau(t)
	}
	k1t, k1w := omega, p.Accel(theta, omega, f(t))
	k2t, k2w := omega+0.5*h*k1w, p.Accel(theta+0.5*h*k1t, omega+0.5*h*k1w, f(t+0.5*h))
	k3t, k3w := omega+0.5*h*k2w, p.Accel(theta+0.5*h*k2t, omega+0.5*h*k2w, f(t+0.5*h))
	k4t, k4w := omega+h*k3w, p.Accel(theta+h*k3t, omega+h*k3w, f(t+h))
	return theta + h/6*(k1t+2*k2t+2*k3t+k4t), omega + h/6*(k1w+2*k2w+2*k3w+k4w)
}

// Advance integrates from t0 to t1 in equal steps of at most h and returns
// the state at t1.
func (p Params) Advance(theta, omega, t0, t1, h float64, tau func(float64) float64) (float64, float64) {
	if t1 <= t0 {
		return theta, omega
	}
	n := int(math.Ceil((t1 - t0) / h))
	hh := (t1 - t0) / float64(n)
	for i := range n {
		theta, omega = p.Step(theta, omega, t0+float64(i)*hh, hh, tau)
	}
	return theta, omega
}

// Options controls Generate. A nil *Options means all defaults.
type Options struct {
	Params *Params // nil means DefaultParams()
	// Runs is the number of runs; 0 means 40.
	Runs int
	// Leaving is how many runs leave the basin; 0 means 5, negative means
	// none. It is capped at Runs.
	Leaving int
	// Bursts is how many of the runs start from a vibration burst rather
	// than a kick; 0 means 10, negative means none.
	Bursts int
	// Duration is the logged length of a run that stays inside, s; 0 means 10.
	Duration float64
	// Rate is the sampling rate, Hz; 0 means 200.
	Rate float64
	// Step is the largest integration step, s; 0 means 1e-4.
	Step float64
	// Jitter is the rms timing jitter, s; 0 means 20e-6, negative means none.
	Jitter float64
	// AngleNoise is the encoder noise (standard deviation), rad; 0 means
	// 0.5e-3, negative means none.
	AngleNoise float64
	// RateNoise is the gyro noise (standard deviation), rad/s; 0 means
	// 5e-3, negative means none.
	RateNoise float64
	// EndStop is the end stop's distance from Trim, rad; 0 means 0.8.
	EndStop float64
}

// settings returns opts with every default filled in.
func (o *Options) settings() Options {
	var s Options
	if o != nil {
		s = *o
	}
	if s.Params == nil {
		p := DefaultParams()
		s.Params = &p
	}
	def := func(v *float64, d float64) {
		switch {
		case *v == 0:
			*v = d
		case *v < 0:
			*v = 0
		}
	}
	defi := func(v *int, d int) {
		switch {
		case *v == 0:
			*v = d
		case *v < 0:
			*v = 0
		}
	}
	defi(&s.Runs, 40)
	defi(&s.Leaving, 5)
	defi(&s.Bursts, 10)
	s.Leaving = min(s.Leaving, s.Runs)
	s.Bursts = min(s.Bursts, s.Runs)
	def(&s.Duration, 10)
	def(&s.Rate, 200)
	def(&s.Step, 1e-4)
	def(&s.Jitter, 20e-6)
	def(&s.AngleNoise, 0.5e-3)
	def(&s.RateNoise, 5e-3)
	def(&s.EndStop, 0.8)
	return s
}

// Burst describes the vibration burst that set up a run's start.
type Burst struct {
	Frequency float64 `json:"frequency_hz"`
	Amplitude float64 `json:"amplitude_N_m"` // torque amplitude
	Duration  float64 `json:"duration_s"`
}

// Run is one generated run: what the logger wrote and what really happened.
type Run struct {
	// File is the CSV file name, "run-01.csv" and so on.
	File string
	// Kind is "kick" or "burst".
	Kind  string
	Burst *Burst // nil for a kick
	// Start is the true state (theta, omega) at the first sample.
	Start [2]float64
	// EnergyRatio is the start's energy over the saddle energy (over the
	// potential at the stops when the saddles lie beyond them).
	EnergyRatio float64
	// Leaves says the run reached the end stop; LeaveTime is when (the
	// time of its last sample), or 0.
	Leaves    bool
	LeaveTime float64
	// T, Theta and Omega are the logged samples (s, rad, rad/s): jittered
	// times, noisy angle and rate.
	T, Theta, Omega []float64
	// TrueTheta and TrueOmega are the noiseless states at T.
	TrueTheta, TrueOmega []float64
}

// ErrSearch is returned by Generate when no start of the requested kind was
// found (only possible with unusual Params or Options).
var ErrSearch = errors.New("demodata: no suitable start found")

// maxTries bounds the rejection sampling of one run's start.
const maxTries = 10000

// Generate simulates the runs. It returns an error wrapping ErrSearch only
// when Options or Params make a requested kind of run impossible (for
// example leaving runs without saddles).
func Generate(seed uint64, opts *Options) ([]Run, error) {
	s := opts.settings()
	p := *s.Params
	if s.Leaving > 0 && !(p.SaddleOffset() < s.EndStop) {
		return nil, fmt.Errorf("leaving runs need saddles inside the end stops: %w", ErrSearch)
	}
	rng := rand.New(rand.NewPCG(seed, 0))
	// Which slots leave and which start from bursts: a seeded shuffle so
	// the kinds are spread over the file names.
	perm := rng.Perm(s.Runs)
	leaves := make([]bool, s.Runs)
	burst := make([]bool, s.Runs)
	for i, k := range perm {
		leaves[k] = i < s.Leaving
	}
	// Bursts go to inside runs first, then one or more leaving runs if
	// there are more bursts than inside runs; with the defaults one
	// leaving run starts from a burst.
	perm = rng.Perm(s.Runs)
	nb := 0
	if s.Leaving > 0 && s.Bursts > 1 {
		for _, k := range perm {
			if leaves[k] {
				burst[k] = true
				nb++
				break
			}
		}
	}
	for _, k := range perm {
		if nb < s.Bursts && !leaves[k] && !burst[k] {
			burst[k] = true
			nb++
		}
	}
	for _, k := range perm {
		if nb < s.Bursts && !burst[k] {
			burst[k] = true
			nb++
		}
	}
	runs := make([]Run, s.Runs)
	for i := range runs {
		r := &runs[i]
		r.File = fmt.Sprintf("run-%02d.csv", i+1)
		var err error
		if burst[i] {
			err = burstStart(r, rng, &s, leaves[i])
		} else {
			err = kickStart(r, rng, &s, leaves[i])
		}
		if err != nil {
			return nil, fmt.Errorf("%s: %w", r.File, err)
		}
		sample(r, rng, &s)
		_, eb := barrier(&s)
		r.EnergyRatio = p.Energy(r.Start[0], r.Start[1]) / eb
	}
	return runs, nil
}

// reaches reports whether the free motion from (theta, omega) reaches the
// end stop within the run's duration. It asks for a margin (2% past the
// stop, within 90% of the duration) so that the logged simulation, whose
// steps differ slightly, surely agrees.
func reaches(s *Options, theta, omega float64) bool {
	p := *s.Params
	h := s.Step
	ds, es := barrier(s)
	for t := 0.0; t < 0.9*s.Duration; t += h {
		theta, omega = p.Step(theta, omega, t, h, nil)
		d := math.Abs(theta - p.Trim)
		if d >= 1.02*s.EndStop {
			return true
		}
		if d < ds && p.Energy(theta, omega) < es {
			return false // trapped: energy only falls
		}
	}
	return false
}

// kickStart draws a kick. Inside: energy 5% to 90% of the saddle energy
// inside the saddles (inside by construction). Leaving: energy 105% to 160%
// of it with the rate pointing away from Trim, kept if it hits the stop.
func kickStart(r *Run, rng *rand.Rand, s *Options, leave bool) error {
	p := *s.Params
	r.Kind = "kick"
	ds, es := barrier(s)
	for range maxTries {
		var lo, hi float64
		if leave {
			lo, hi = 1.05, 1.6
		} else {
			lo, hi = 0.05, 0.9
		}
		e := es * (lo + (hi-lo)*rng.Float64())
		// An angle inside the saddles (or anywhere up to the stop for a
		// leaving kick), then the rate that gives energy e.
		span := 0.95 * ds
		if leave {
			span = ds
		}
		d := span * (2*rng.Float64() - 1)
		u := p.Energy(p.Trim+d, 0)
		if u >= e {
			continue
		}
		w := math.Sqrt(2 * (e - u) / p.J)
		if rng.IntN(2) == 0 {
			w = -w
		}
		if leave && d*w < 0 {
			w = -w // head outward
		}
		th := p.Trim + d
		if leave && !reaches(s, th, w) {
			continue // inside kicks are inside by construction
		}
		r.Start = [2]float64{th, w}
		return nil
	}
	return ErrSearch
}

// burstStart simulates a vibration burst from rest: a torque
// A sin(2 pi f t) for a duration D, f in [1.2, 1.8] Hz, D in [0.4, 1.2] s.
// Inside runs keep bursts that end below 90% of the saddle energy inside
// the saddles. A leaving burst is cut short once the mount holds 5% more
// energy than the saddles (after at least 0.3 s) and is kept if the free
// motion then hits the stop. The burst itself must not reach the stop.
func burstStart(r *Run, rng *rand.Rand, s *Options, leave bool) error {
	p := *s.Params
	r.Kind = "burst"
	ds, es := barrier(s)
	// Torque amplitude as a share of the spring torque at the saddle
	// (or at the stop): 3% to 35% for inside runs, 30% to 70% for leaving
	// ones.
	a0 := p.K * ds
	lo, hi := 0.03, 0.35
	if leave {
		lo, hi = 0.3, 0.7
	}
	for range maxTries {
		b := Burst{
			Frequency: 1.2 + 0.6*rng.Float64(),
			Amplitude: a0 * (lo + (hi-lo)*rng.Float64()),
			Duration:  0.4 + 0.8*rng.Float64(),
		}
		tau := func(t float64) float64 { return b.Amplitude * math.Sin(2*math.Pi*b.Frequency*t) }
		th, w := p.Trim, 0.0
		h := s.Step
		n := int(math.Ceil(b.Duration / h))
		hh := b.Duration / float64(n)
		hit := false
		for i := range n {
			th, w = p.Step(th, w, float64(i)*hh, hh, tau)
			if math.Abs(th-p.Trim) >= s.EndStop {
				hit = true
				break
			}
			// A leaving burst stops once it has pumped in more energy
			// than the saddles hold: past that the softening spring
			// would throw the mount to its stop during the burst.
			if t := float64(i+1) * hh; leave && t >= 0.3 && math.Abs(th-p.Trim) < ds && p.Energy(th, w) >= 1.05*es {
				b.Duration = t
				break
			}
		}
		if hit {
			continue
		}
		if leave {
			if !reaches(s, th, w) {
				continue
			}
		} else if p.Energy(th, w) >= 0.9*es || math.Abs(th-p.Trim) >= ds || p.Energy(th, w) < 0.05*es {
			continue
		}
		r.Burst = &b
		r.Start = [2]float64{th, w}
		return nil
	}
	return ErrSearch
}

// sample integrates the free run from r.Start and logs it.
func sample(r *Run, rng *rand.Rand, s *Options) {
	p := *s.Params
	dt := 1 / s.Rate
	n := int(math.Round(s.Duration*s.Rate)) + 1
	th, w := r.Start[0], r.Start[1]
	tPrev := 0.0
	for i := range n {
		t := 0.0
		if i > 0 {
			j := s.Jitter * rng.NormFloat64()
			j = max(-3*s.Jitter, min(3*s.Jitter, j)) // clipped: times stay increasing
			t = math.Round((float64(i)*dt+j)*1e6) / 1e6
			th, w = p.Advance(th, w, tPrev, t, s.Step, nil)
		}
		tPrev = t
		r.T = append(r.T, t)
		r.TrueTheta = append(r.TrueTheta, th)
		r.TrueOmega = append(r.TrueOmega, w)
		r.Theta = append(r.Theta, th+s.AngleNoise*rng.NormFloat64())
		r.Omega = append(r.Omega, w+s.RateNoise*rng.NormFloat64())
		if math.Abs(th-p.Trim) >= s.EndStop {
			r.Leaves, r.LeaveTime = true, t
			break
		}
	}
}
