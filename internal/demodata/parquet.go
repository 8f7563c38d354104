package demodata

import (
	"io"
	"strconv"

	"github.com/apache/arrow/go/v15/arrow"
	"github.com/apache/arrow/go/v15/arrow/array"
	"github.com/apache/arrow/go/v15/arrow/memory"
	"github.com/apache/arrow/go/v15/parquet"
	"github.com/apache/arrow/go/v15/parquet/pqarrow"
)

// ParquetName returns the Parquet file name of r: its CSV name with the
// extension .parquet.
func (r *Run) ParquetName() string {
	return r.File[:len(r.File)-len(".csv")] + ".parquet"
}

// WriteParquet writes r as a Parquet file of three float64 columns named
// as the CSV header's cells ("time [s]", "theta [rad]", "omega [rad/s]").
// The values are the CSV file's decimals read back, so the two formats
// hold the same numbers bit for bit.
func (r *Run) WriteParquet(w io.Writer) error {
	mem := memory.NewGoAllocator()
	schema := arrow.NewSchema([]arrow.Field{
		{Name: "time [s]", Type: arrow.PrimitiveTypes.Float64},
		{Name: "theta [rad]", Type: arrow.PrimitiveTypes.Float64},
		{Name: "omega [rad/s]", Type: arrow.PrimitiveTypes.Float64},
	}, nil)
	b := array.NewRecordBuilder(mem, schema)
	defer b.Release()
	var buf []byte
	asCSV := func(v float64) float64 {
		buf = strconv.AppendFloat(buf[:0], v, 'f', 6, 64)
		x, _ := strconv.ParseFloat(string(buf), 64) // our own output: always valid
		return x
	}
	for j, col := range [][]float64{r.T, r.Theta, r.Omega} {
		fb := b.Field(j).(*array.Float64Builder)
		fb.Reserve(len(col))
		for _, v := range col {
			fb.UnsafeAppend(asCSV(v))
		}
	}
	rec := b.NewRecord()
	defer rec.Release()
	// The file writer closes a sink that is an io.Closer; w stays the
	// caller's to close.
	fw, err := pqarrow.NewFileWriter(schema, struct{ io.Writer }{w}, parquet.NewWriterProperties(parquet.WithAllocator(mem)),
		pqarrow.DefaultWriterProps())
	if err != nil {
		return err
	}
	if err := fw.Write(rec); err != nil {
		fw.Close()
		return err
	}
	return fw.Close()
}
