package main

import (
	"go/parser"
	"go/token"
	"io/fs"
	"path/filepath"
	"strconv"
	"strings"
	"testing"
)

// TestLayering keeps the rules of the house (DEVELOPERS.md): compute/ imports
// nothing from app/ or canvas/, and canvas/ imports nothing from app/.
// Test files are included: a test that needs the window belongs in app/.
func TestLayering(t *testing.T) {
	forbidden := map[string][]string{
		"compute": {"lodestone/app", "lodestone/canvas"},
		"canvas":  {"lodestone/app"},
	}
	checked := 0
	for dir, bans := range forbidden {
		err := filepath.WalkDir(dir, func(path string, d fs.DirEntry, err error) error {
			if err != nil || d.IsDir() || !strings.HasSuffix(path, ".go") {
				return err
			}
			f, err := parser.ParseFile(token.NewFileSet(), path, nil, parser.ImportsOnly)
			if err != nil {
				return err
			}
			checked++
			for _, imp := range f.Imports {
				p, _ := strconv.Unquote(imp.Path.Value)
				for _, ban := range bans {
					if p == ban || strings.HasPrefix(p, ban+"/") {
						t.Errorf("%s imports %s: %s/ may not import %s/", path, p, dir, strings.TrimPrefix(ban, "lodestone/"))
					}
				}
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	if checked < 50 {
		t.Fatalf("checked only %d files; is the test run from the top of the tree?", checked)
	}
}
