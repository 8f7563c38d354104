package gram

// AddRows adds to the upper triangle of c (n x n, row-major) the products
// sum_l a[l][i] a[l][j], i <= j, of the k rows of a (row-major with stride
// lda >= n): c += A'A for the k x n matrix A. Some entries below the
// diagonal, within 8 columns of it, may be changed too; the rest of the
// lower triangle is not touched. On amd64 with AVX2 and FMA the work is
// done in 4 x 8 register tiles by an assembly kernel (two vectors of four
// per row of the tile), elsewhere by plain Go. It does not allocate. It
// panics if a or c is too short.
func AddRows(c, a []float64, n, k, lda int) {
	if n == 0 || k == 0 {
		return
	}
	_ = c[n*n-1]
	_ = a[(k-1)*lda+n-1]
	n4, n8 := 0, 0
	if useFMA {
		n4, n8 = n&^3, n&^7
		for i := 0; i < n4; i += 4 {
			for j := i &^ 7; j < n8; j += 8 {
				fma4x8(&a[i], &a[j], lda, k, &c[i*n+j], n)
			}
		}
	}
	// What the tiles left: columns from n8 on, and rows from n4 on.
	for i := 0; i < n; i++ {
		j0 := i
		if i < n4 {
			j0 = max(i, n8)
		}
		for j := j0; j < n; j++ {
			s := 0.0
			for l := 0; l < k; l++ {
				r := a[l*lda:]
				s += r[i] * r[j]
			}
			c[i*n+j] += s
		}
	}
}
