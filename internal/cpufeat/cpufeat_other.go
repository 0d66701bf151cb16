//go:build !amd64

package cpufeat

// AVX2FMA is false where Lodestone has no assembly kernels.
const AVX2FMA = false
