package localelog

import (
	"bytes"
	"log"
	"testing"
)

func TestFilterDropsOnlyTheLocaleComplaint(t *testing.T) {
	var out bytes.Buffer
	l := log.New(NewFilter(&out), "", log.LstdFlags)
	// The toolkit's fyne.LogError: three Println calls.
	complain := func(locale string) {
		l.Println("Fyne error: ", "Error parsing user locale "+locale)
		l.Println("  Cause:", "language: tag is not well-formed")
		l.Printf("  At: %s:%d", "/root/go/pkg/mod/fyne.io/fyne/v2@v2.7.1/lang/locale.go", 35)
	}
	complain("C")
	l.Println("first line of ours")
	complain("POSIX")
	complain("xx_YY") // another locale: a real problem, kept
	l.Println("  Cause: something else")
	got := out.String()
	for _, want := range []string{"first line of ours", "Error parsing user locale xx_YY", "  At: /root", "  Cause: something else"} {
		if !bytes.Contains([]byte(got), []byte(want)) {
			t.Errorf("output lost %q:\n%s", want, got)
		}
	}
	if bytes.Count([]byte(got), []byte("\n")) != 5 || bytes.Contains([]byte(got), []byte("locale C\n")) || bytes.Contains([]byte(got), []byte("POSIX")) {
		t.Errorf("output:\n%s", got)
	}
}
