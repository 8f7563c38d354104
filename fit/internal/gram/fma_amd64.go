package gram

import "golang.org/x/sys/cpu"

// useFMA says the assembly kernel may run: AVX2 and FMA, with the
// operating system saving the vector registers (cpu checks OSXSAVE).
var useFMA = cpu.X86.HasAVX2 && cpu.X86.HasFMA

// fma4x8 adds to the 4 x 8 tile at c (row stride ldc elements) the
// products ai[l*lda+r] * aj[l*lda+s], r < 4, s < 8, summed over l < k.
//
//go:noescape
func fma4x8(ai, aj *float64, lda, k int, c *float64, ldc int)
