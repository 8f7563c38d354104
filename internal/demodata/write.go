package demodata

import (
	"bufio"
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
)

// Header is the CSV header line of every run file.
const Header = "time [s],theta [rad],omega [rad/s]"

// TruthFile is the name of the truth file written beside the runs.
const TruthFile = "truth.json"

// TruthFormat is the format string of truth.json.
const TruthFormat = "basin.demo-truth/1"

// WriteCSV writes r as CSV: the Header, then one line a sample with time to
// 1 µs and angle and rate to 1 µrad and 1 µrad/s.
func (r *Run) WriteCSV(w io.Writer) error {
	bw := bufio.NewWriter(w)
	bw.WriteString(Header)
	bw.WriteByte('\n')
	var buf []byte
	for i := range r.T {
		buf = strconv.AppendFloat(buf[:0], r.T[i], 'f', 6, 64)
		buf = append(buf, ',')
		buf = strconv.AppendFloat(buf, r.Theta[i], 'f', 6, 64)
		buf = append(buf, ',')
		buf = strconv.AppendFloat(buf, r.Omega[i], 'f', 6, 64)
		buf = append(buf, '\n')
		bw.Write(buf)
	}
	return bw.Flush()
}

// Truth is the content of truth.json: what really happened in each run.
type Truth struct {
	Format   string `json:"format"`
	Scenario string `json:"scenario"`
	Seed     uint64 `json:"seed"`
	Params   Params `json:"params"`
	// Derived figures of Params.
	NaturalFrequency float64      `json:"natural_frequency_hz"`
	DampingRatio     float64      `json:"damping_ratio"`
	Equilibrium      [2]float64   `json:"equilibrium"` // (Trim, 0)
	Saddles          [][2]float64 `json:"saddles"`
	SaddleEnergy     float64      `json:"saddle_energy_J"`
	EndStop          float64      `json:"end_stop_rad"`
	AngleNoise       float64      `json:"angle_noise_rad"`
	RateNoise        float64      `json:"rate_noise_rad_s"`
	Rate             float64      `json:"rate_hz"`
	Runs             []TruthRun   `json:"runs"`
	// Leaving lists the CSV files of the runs that leave the basin.
	Leaving []string `json:"leaving"`
}

// TruthRun is one run's entry in truth.json.
type TruthRun struct {
	File string `json:"file"`
	// Parquet is the run's name when written as Parquet (WriteParquetDir).
	Parquet     string     `json:"parquet"`
	Kind        string     `json:"kind"`
	Burst       *Burst     `json:"burst,omitempty"`
	Start       [2]float64 `json:"start"`
	EnergyRatio float64    `json:"energy_ratio"`
	Leaves      bool       `json:"leaves"`
	LeaveTime   float64    `json:"leave_time_s,omitempty"`
	Samples     int        `json:"samples"`
}

// NewTruth summarises runs generated with seed and opts.
func NewTruth(seed uint64, opts *Options, runs []Run) *Truth {
	s := opts.settings()
	p := *s.Params
	t := &Truth{
		Format:           TruthFormat,
		Scenario:         "pitch-stabilised camera mount on a vibration rig (invented demo)",
		Seed:             seed,
		Params:           p,
		NaturalFrequency: p.NaturalFrequency(),
		DampingRatio:     p.DampingRatio(),
		Equilibrium:      [2]float64{p.Trim, 0},
		SaddleEnergy:     p.SaddleEnergy(),
		EndStop:          s.EndStop,
		AngleNoise:       s.AngleNoise,
		RateNoise:        s.RateNoise,
		Rate:             s.Rate,
		Leaving:          []string{},
	}
	if d := p.SaddleOffset(); d < s.EndStop {
		t.Saddles = [][2]float64{{p.Trim - d, 0}, {p.Trim + d, 0}}
	}
	for i := range runs {
		r := &runs[i]
		t.Runs = append(t.Runs, TruthRun{File: r.File, Parquet: r.ParquetName(), Kind: r.Kind, Burst: r.Burst, Start: r.Start,
			EnergyRatio: r.EnergyRatio, Leaves: r.Leaves, LeaveTime: r.LeaveTime, Samples: len(r.T)})
		if r.Leaves {
			t.Leaving = append(t.Leaving, r.File)
		}
	}
	return t
}

// WriteJSON writes t as indented JSON.
func (t *Truth) WriteJSON(w io.Writer) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	return enc.Encode(t)
}

// ReadTruth decodes a truth.json and checks its format.
func ReadTruth(r io.Reader) (*Truth, error) {
	var t Truth
	if err := json.NewDecoder(r).Decode(&t); err != nil {
		return nil, fmt.Errorf("truth: %w", err)
	}
	if t.Format != TruthFormat {
		return nil, fmt.Errorf("truth: format %q, want %q", t.Format, TruthFormat)
	}
	return &t, nil
}

// WriteDir generates the data set and writes it into dir (created if
// needed): one CSV file a run and truth.json. Each file is written under a
// temporary name and renamed, so none is left half-written.
func WriteDir(ctx context.Context, dir string, seed uint64, opts *Options) (*Truth, error) {
	return writeDir(ctx, dir, seed, opts, false)
}

// WriteParquetDir is WriteDir writing one Parquet file a run
// (run-01.parquet, ...) instead of CSV, with the same numbers.
func WriteParquetDir(ctx context.Context, dir string, seed uint64, opts *Options) (*Truth, error) {
	return writeDir(ctx, dir, seed, opts, true)
}

func writeDir(ctx context.Context, dir string, seed uint64, opts *Options, pq bool) (*Truth, error) {
	runs, err := Generate(seed, opts)
	if err != nil {
		return nil, err
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	for i := range runs {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		name, write := runs[i].File, runs[i].WriteCSV
		if pq {
			name, write = runs[i].ParquetName(), runs[i].WriteParquet
		}
		if err := writeFile(filepath.Join(dir, name), write); err != nil {
			return nil, err
		}
	}
	t := NewTruth(seed, opts, runs)
	if err := writeFile(filepath.Join(dir, TruthFile), t.WriteJSON); err != nil {
		return nil, err
	}
	return t, nil
}

// writeFile writes path atomically: a temporary file, then a rename.
func writeFile(path string, write func(io.Writer) error) error {
	f, err := os.CreateTemp(filepath.Dir(path), "."+filepath.Base(path)+".tmp*")
	if err != nil {
		return err
	}
	tmp := f.Name()
	err = write(f)
	if cerr := f.Close(); err == nil {
		err = cerr
	}
	if err == nil {
		err = os.Chmod(tmp, 0o644)
	}
	if err == nil {
		err = os.Rename(tmp, path)
	}
	if err != nil {
		os.Remove(tmp)
		return fmt.Errorf("writing %s: %w", path, err)
	}
	return nil
}
