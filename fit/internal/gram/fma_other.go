//go:build !amd64

package gram

const useFMA = false

func fma4x8(ai, aj *float64, lda, k int, c *float64, ldc int) { panic("gram: no FMA kernel") }
