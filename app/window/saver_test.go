package window

import (
	"io"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"lodestone/compute/atlas"
)

// shownErrors records the error dialogs a room asks for.
type shownErrors []string

func (s *shownErrors) showError(title string, err error) {
	*s = append(*s, title+": "+err.Error())
}

// TestSavingOverAnInputFileIsRefused: a save whose file is one of the files
// the atlas was read from — by its own name, through a symbolic link or by
// another spelling — is refused with an error dialog before anything is
// written, and the file keeps its content.
func TestSavingOverAnInputFileIsRefused(t *testing.T) {
	dir := t.TempDir()
	in := filepath.Join(dir, "meta.csv")
	os.WriteFile(in, []byte("cell,kind\nc1,a\n"), 0o644)
	link := filepath.Join(dir, "link.csv")
	if err := os.Symlink("meta.csv", link); err != nil {
		t.Skipf("no symbolic links here: %v", err)
	}
	os.Mkdir(filepath.Join(dir, "sub"), 0o755)
	var errs shownErrors
	s := &saver{st: &atlasState{data: &atlas.Dataset{Sources: []string{in}}}, errs: &errs}
	for _, path := range []string{in, link, filepath.Join(dir, "sub", "..", "meta.csv")} {
		errs = nil
		s.write(path, func(io.Writer) error {
			t.Fatalf("%s: written", path)
			return nil
		})
		if len(errs) != 1 || !strings.Contains(errs[0], "Could not save") || !strings.Contains(errs[0], "the atlas was read from: saving would destroy it") || !strings.Contains(errs[0], path) {
			t.Errorf("%s: dialogs %q", path, errs)
		}
	}
	if b, _ := os.ReadFile(in); string(b) != "cell,kind\nc1,a\n" {
		t.Fatalf("the input now holds %q", b)
	}
}
