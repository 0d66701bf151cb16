package prep

import (
	"fmt"
	"strings"
)

// Summary says in one line what quality control kept and what each filter
// that removed anything removed, for instance
//
//	kept 4 of 500 cells and 1995 of 2000 genes; removed 496 cells with fewer than 200 detected genes, 5 genes detected in fewer than 3 cells
func (r *QCReport) Summary() string {
	var b strings.Builder
	fmt.Fprintf(&b, "kept %d of %d cells and %d of %d genes", r.CellsKept, r.Cells, r.GenesKept, r.Genes)
	sep := "; removed "
	for _, f := range r.Filters {
		n, what := f.Cells, "cells"
		if f.Genes > 0 {
			n, what = f.Genes, "genes"
		}
		if n == 0 {
			continue
		}
		name := f.Name
		if n == 1 {
			// "cells with …" → "1 cell with …"
			name = strings.Replace(name, what, what[:len(what)-1], 1)
		}
		fmt.Fprintf(&b, "%s%d %s", sep, n, name)
		sep = ", "
	}
	return b.String()
}
