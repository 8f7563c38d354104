// Package gram computes Gram matrices (sums of outer products of rows,
// the normal matrices of least squares and of interior-point steps) with
// a register-tiled kernel ([AddRows]).
package gram
