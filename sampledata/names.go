package sampledata

import (
	"fmt"
	"strings"
)

// Gene symbols are invented words of two or three syllables, sometimes with a
// digit, drawn from a stream with a fixed seed so that every atlas, whatever
// its seed, names gene g the same way. Mitochondrial-like genes are named
// MitoPrefix followed by a short invented word and a digit.

// MitoPrefix starts the symbol of every mitochondrial-like gene and of no
// other gene, as in the usual convention for human mitochondrial genes.
const MitoPrefix = "MT-"

// maxSymbolLen is the longest invented symbol of a nuclear gene.
const maxSymbolLen = 8

// nameSeed fixes the stream of invented gene symbols.
const nameSeed = 0x6c6f6465

var (
	onsets = []string{"B", "D", "F", "G", "K", "L", "M", "N", "P", "R", "S", "T", "V", "Z",
		"BR", "DR", "GL", "KR", "PR", "SK", "TH", "TR", "VR", "ZH", "QU"}
	vowels = []string{"A", "E", "I", "O", "U", "AU", "EI", "OU", "IA"}
	codas  = []string{"", "", "", "L", "N", "R", "S", "X", "K", "M"}
)

// syllable appends one invented syllable to b.
func syllable(b *strings.Builder, s *stream) {
	b.WriteString(onsets[int(s.uniform()*float64(len(onsets)))])
	b.WriteString(vowels[int(s.uniform()*float64(len(vowels)))])
	b.WriteString(codas[int(s.uniform()*float64(len(codas)))])
}

// geneSymbols returns n distinct invented symbols for nuclear genes followed
// by mito distinct symbols starting with MitoPrefix. The first k symbols of a
// call with n nuclear genes are the same for every n ≥ k.
func geneSymbols(n, mito int) []string {
	out := make([]string, 0, n+mito)
	seen := make(map[string]bool, n+mito)
	s := newStream(nameSeed, purposeNames, 0)
	var b strings.Builder
	for len(out) < n {
		b.Reset()
		syllable(&b, &s)
		syllable(&b, &s)
		switch u := s.uniform(); {
		case u < 0.2:
			syllable(&b, &s)
		case u < 0.7:
			b.WriteByte(byte('1' + int(s.uniform()*9)))
		}
		name := b.String()
		if seen[name] || len(name) > maxSymbolLen || strings.HasPrefix(name, "MT") {
			continue
		}
		seen[name] = true
		out = append(out, name)
	}
	m := newStream(nameSeed, purposeNames, 1)
	for len(out) < n+mito {
		b.Reset()
		b.WriteString(MitoPrefix)
		syllable(&b, &m)
		b.WriteByte(byte('1' + int(m.uniform()*9)))
		name := b.String()
		if seen[name] || len(name) < len(MitoPrefix)+4 {
			continue
		}
		seen[name] = true
		out = append(out, name)
	}
	return out
}

// geneID returns the stable identifier of gene g (0-based).
func geneID(g int) string { return fmt.Sprintf("bcomb-g%05d", g+1) }

// cellID returns the identifier of cell i (0-based).
func cellID(i int) string { return fmt.Sprintf("bcomb-c%06d", i+1) }
