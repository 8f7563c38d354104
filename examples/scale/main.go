// Command scale writes a large synthetic data set for the scale check
// (`make scale`): runs of a six-state system, three lightly coupled damped
// oscillators with cubic stiffening, logged at 100 Hz with sensor noise.
// The system is invented for this check.
//
// Usage:
//
//	go run ./examples/scale -runs 1000 -samples 10000 -out DIR
package main

import (
	"bufio"
	"flag"
	"fmt"
	"log"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
)

func field(dst, x []float64) {
	// Oscillator i: positions x[2i], rates x[2i+1].
	w := [3]float64{4, 6.25, 9}  // squared natural frequencies, 1/s²
	c := [3]float64{0.8, 1, 1.2} // damping, 1/s
	for i := 0; i < 3; i++ {
		p, v := x[2*i], x[2*i+1]
		q := x[(2*i+2)%6] // coupling to the next oscillator
		dst[2*i] = v
		dst[2*i+1] = -w[i]*p - c[i]*v - 0.5*p*p*p + 0.3*q
	}
}

func rk4(x []float64, h float64, k [4][6]float64, tmp []float64) {
	field(k[0][:], x)
	for j := range tmp {
		tmp[j] = x[j] + h/2*k[0][j]
	}
	field(k[1][:], tmp)
	for j := range tmp {
		tmp[j] = x[j] + h/2*k[1][j]
	}
	field(k[2][:], tmp)
	for j := range tmp {
		tmp[j] = x[j] + h*k[2][j]
	}
	field(k[3][:], tmp)
	for j := range x {
		x[j] += h / 6 * (k[0][j] + 2*k[1][j] + 2*k[2][j] + k[3][j])
	}
}

func main() {
	runs := flag.Int("runs", 1000, "number of runs")
	samples := flag.Int("samples", 10000, "samples per run")
	out := flag.String("out", "scale-data", "output folder")
	seed := flag.Uint64("seed", 1, "random seed")
	flag.Parse()
	if err := os.MkdirAll(*out, 0o755); err != nil {
		log.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(*seed, 0))
	const dt = 0.01
	var k [4][6]float64
	tmp := make([]float64, 6)
	buf := make([]byte, 0, 256)
	for r := 0; r < *runs; r++ {
		f, err := os.Create(filepath.Join(*out, fmt.Sprintf("run%05d.csv", r)))
		if err != nil {
			log.Fatal(err)
		}
		w := bufio.NewWriterSize(f, 1<<20)
		w.WriteString("time [s],p1 [m],v1 [m/s],p2 [m],v2 [m/s],p3 [m],v3 [m/s]\n")
		x := make([]float64, 6)
		for j := range x {
			x[j] = 1.5 * (2*rng.Float64() - 1)
		}
		for i := 0; i < *samples; i++ {
			buf = strconv.AppendFloat(buf[:0], float64(i)*dt, 'f', 2, 64)
			for j := range x {
				buf = append(buf, ',')
				buf = strconv.AppendFloat(buf, x[j]+0.002*rng.NormFloat64(), 'g', 7, 64)
			}
			buf = append(buf, '\n')
			w.Write(buf)
			for s := 0; s < 2; s++ {
				rk4(x, dt/2, k, tmp)
			}
		}
		if err := w.Flush(); err != nil {
			log.Fatal(err)
		}
		if err := f.Close(); err != nil {
			log.Fatal(err)
		}
	}
}
