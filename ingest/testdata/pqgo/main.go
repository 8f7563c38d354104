// Command pqgo writes indep.parquet and indep.csv, the same samples in
// both formats, with github.com/parquet-go/parquet-go: a Parquet writer
// independent of the Apache Arrow one that basin reads with. It lives in
// its own module so that basin does not depend on it. Run from here:
//
//	go run . -out ..
package main

import (
	"flag"
	"fmt"
	"log"
	"math"
	"os"
	"path/filepath"
	"strconv"

	"github.com/parquet-go/parquet-go"
)

type row struct {
	Time  float64  `parquet:"time"`
	Theta float64  `parquet:"theta"`
	Omega *float64 `parquet:"omega,optional"`
	Count int32    `parquet:"count"`
	Ticks int64    `parquet:"ticks"`
	Gain  float32  `parquet:"gain"`
}

func main() {
	out := flag.String("out", ".", "output folder")
	flag.Parse()
	const n = 2500
	rows := make([]row, n)
	for i := range rows {
		t := float64(i) / 200
		rows[i] = row{Time: t, Theta: 0.3 * math.Exp(-t) * math.Cos(7*t), Count: int32(i % 17), Ticks: int64(i) * 1000003,
			Gain: float32(1 + 0.001*float64(i%50))}
		if i%500 != 250 { // every 500th row from 250 on has a null omega
			w := -2.1 * math.Exp(-t) * math.Sin(7*t)
			rows[i].Omega = &w
		}
	}
	pf, err := os.Create(filepath.Join(*out, "indep.parquet"))
	if err != nil {
		log.Fatal(err)
	}
	w := parquet.NewGenericWriter[row](pf, parquet.MaxRowsPerRowGroup(1000))
	if _, err := w.Write(rows); err != nil {
		log.Fatal(err)
	}
	if err := w.Close(); err != nil {
		log.Fatal(err)
	}
	if err := pf.Close(); err != nil {
		log.Fatal(err)
	}
	cf, err := os.Create(filepath.Join(*out, "indep.csv"))
	if err != nil {
		log.Fatal(err)
	}
	g := func(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
	fmt.Fprintln(cf, "time,theta,omega,count,ticks,gain")
	for _, r := range rows {
		om := ""
		if r.Omega != nil {
			om = g(*r.Omega)
		}
		fmt.Fprintf(cf, "%s,%s,%s,%d,%d,%s\n", g(r.Time), g(r.Theta), om, r.Count, r.Ticks, g(float64(r.Gain)))
	}
	if err := cf.Close(); err != nil {
		log.Fatal(err)
	}
}
