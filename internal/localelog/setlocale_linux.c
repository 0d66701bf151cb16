//go:build cgo

// The file dialogs' toolkit (GTK, initialised by github.com/sqweek/dialog's
// init function) calls setlocale(LC_ALL, "") in gtk_init_check and, when the
// C library has no such locale, writes
//
//	(process:N): Gtk-WARNING **: Locale not supported by C library.
//		Using the fallback 'C' locale.
//
// straight to file descriptor 2, on every start of the program, headless
// commands included. That happens whenever LANG (or LC_ALL) names a locale
// that was never generated on the machine, as on most servers reached from
// a desktop that sends its own LANG. This constructor runs when the program
// is loaded, before any Go package is initialised, and makes the same call:
// when it succeeds, GTK's own call sets the same locale again; when it
// fails, the C library stays in the C locale, as it would after GTK's
// warning, and GTK is told not to try again (gtk_disable_setlocale), so the
// state is the same and nothing is printed.

#include <locale.h>
#include <gtk/gtk.h>

__attribute__((constructor)) static void lodestone_setlocale(void) {
	if (setlocale(LC_ALL, "") == NULL) {
		gtk_disable_setlocale();
	}
}
