package window

import (
	"image/color"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/theme"
)

// look is Lodestone's own theme: warm paper, graphite ink and an iron-oxide
// accent, the same in light and dark system settings so that the map's
// colours always sit on the same ground.
type look struct{}

var _ fyne.Theme = look{}

var (
	paper      = color.NRGBA{R: 0xf2, G: 0xef, B: 0xe9, A: 0xff}
	paperDeep  = color.NRGBA{R: 0xe5, G: 0xe0, B: 0xd6, A: 0xff}
	sheet      = color.NRGBA{R: 0xfb, G: 0xfa, B: 0xf7, A: 0xff}
	ink        = color.NRGBA{R: 0x25, G: 0x27, B: 0x2c, A: 0xff}
	inkSoft    = color.NRGBA{R: 0x6d, G: 0x6a, B: 0x64, A: 0xff}
	ironOxide  = color.NRGBA{R: 0xa8, G: 0x4b, B: 0x2a, A: 0xff}
	rule       = color.NRGBA{R: 0xcf, G: 0xc8, B: 0xbb, A: 0xff}
	hoverTint  = color.NRGBA{R: 0xa8, G: 0x4b, B: 0x2a, A: 0x22}
	chosenTint = color.NRGBA{R: 0xa8, G: 0x4b, B: 0x2a, A: 0x44}
)

func (look) Color(n fyne.ThemeColorName, _ fyne.ThemeVariant) color.Color {
	switch n {
	case theme.ColorNameBackground, theme.ColorNameMenuBackground, theme.ColorNameOverlayBackground:
		return paper
	case theme.ColorNameHeaderBackground:
		return paperDeep
	case theme.ColorNameButton:
		return paperDeep
	case theme.ColorNameInputBackground:
		return sheet
	case theme.ColorNameForeground:
		return ink
	case theme.ColorNamePlaceHolder, theme.ColorNameDisabled:
		return inkSoft
	case theme.ColorNamePrimary, theme.ColorNameFocus, theme.ColorNameHyperlink:
		return ironOxide
	case theme.ColorNameForegroundOnPrimary:
		return sheet
	case theme.ColorNameInputBorder, theme.ColorNameSeparator, theme.ColorNameScrollBar:
		return rule
	case theme.ColorNameHover:
		return hoverTint
	case theme.ColorNameSelection, theme.ColorNamePressed:
		return chosenTint
	}
	return theme.DefaultTheme().Color(n, theme.VariantLight)
}

func (look) Font(s fyne.TextStyle) fyne.Resource     { return theme.DefaultTheme().Font(s) }
func (look) Icon(n fyne.ThemeIconName) fyne.Resource { return theme.DefaultTheme().Icon(n) }
func (look) Size(n fyne.ThemeSizeName) float32 {
	switch n {
	case theme.SizeNameInnerPadding:
		return 6
	case theme.SizeNameSeparatorThickness:
		return 1
	}
	return theme.DefaultTheme().Size(n)
}
