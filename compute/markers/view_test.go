package markers

import (
	"lodestone/compute/sparse"
)

// viewOf returns the values of m as a view read as stored (m must be a valid
// CSR matrix).
func viewOf(m *sparse.CSR) *sparse.View {
	v, err := sparse.NewView(sparse.FromCSR(m), nil, nil, 0)
	if err != nil {
		panic(err)
	}
	return v
}
