package ingest

import "strconv"

func ftoa(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

func atof(s string) float64 {
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		panic(err)
	}
	return v
}
