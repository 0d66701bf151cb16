package flatsvg

import (
	"errors"
	"os"
	"strings"
	"testing"
)

// FuzzParse checks that Parse returns either an image or a *ParseError,
// that Render draws the image or refuses it with ErrRange, and that
// neither panics.
func FuzzParse(f *testing.F) {
	f.Add(features)
	if icon, err := os.ReadFile(iconPath); err == nil {
		f.Add(string(icon))
	}
	f.Add(head + `<path d="M0 0 C1 2 3 4 5 6 H1 V2 Z L3 3"/></svg>`)
	f.Add(head + `<circle cx="5" cy="5" r="4" fill="#abc" fill-opacity=".5"/></svg>`)
	f.Fuzz(func(t *testing.T, src string) {
		img, err := Parse(strings.NewReader(src))
		if err != nil {
			var pe *ParseError
			if !errors.As(err, &pe) {
				t.Fatalf("error %v (%T) is not a *ParseError", err, err)
			}
			return
		}
		if _, err := img.Render(8, 8); err != nil && !errors.Is(err, ErrRange) {
			t.Fatalf("Render of a parsed image: %v", err)
		}
	})
}
