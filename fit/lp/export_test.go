package lp

// SetSkipRows turns the evaluator's skipping of surely satisfied rows on
// or off for a test and returns the previous setting.
func SetSkipRows(on bool) bool {
	old := skipRows
	skipRows = on
	return old
}
