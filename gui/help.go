package gui

import (
	"strings"

	"fyne.io/fyne/v2"
	"fyne.io/fyne/v2/container"
	"fyne.io/fyne/v2/dialog"
	"fyne.io/fyne/v2/widget"

	"telltale/internal/glossary"
	"telltale/internal/version"
)

// Caution is the note every explanation carries.
const Caution = "Explanations describe the model, not the world. Validate a model on data of your own before use, " +
	"never use it alone for decisions about people, and follow the rules of the place where it is used."

// cautionShort is the short form shown on the explanation view.
const cautionShort = "These numbers describe the model, not the world: validate before use, never use it alone for decisions about people, " +
	"and follow the rules of the place it is used."

// cautionPeople ends the introductions of the views that judge a model
// (Results, Cue audit).
const cautionPeople = "Never use a model alone for decisions about people."

// dialogSize is the size of the Help dialogs: inside a 1024×700 window.
var dialogSize = fyne.NewSize(720, 520)

// glossaryContent lists the glossary's terms by topic: the name in bold,
// what it tells, and how it is computed in the monospace font.
func glossaryContent() fyne.CanvasObject {
	box := container.NewVBox()
	for _, topic := range glossary.Topics {
		box.Add(widget.NewLabelWithStyle(capitalize(topic), fyne.TextAlignLeading, fyne.TextStyle{Bold: true, Italic: true}))
		for _, t := range glossary.Terms {
			if t.Topic != topic {
				continue
			}
			segs := []widget.RichTextSegment{
				&widget.TextSegment{Text: t.Name + ": ", Style: widget.RichTextStyleStrong},
				&widget.TextSegment{Text: t.Meaning + " ", Style: widget.RichTextStyleInline},
			}
			if t.Formula != "" {
				segs = append(segs, &widget.TextSegment{Text: t.Formula, Style: widget.RichTextStyleCodeInline})
			}
			r := widget.NewRichText(segs...)
			r.Wrapping = fyne.TextWrapWord
			box.Add(r)
		}
	}
	return container.NewVScroll(box)
}

func capitalize(s string) string {
	if s == "" {
		return s
	}
	return strings.ToUpper(s[:1]) + s[1:]
}

// showGlossary shows Help › Glossary.
func (st *State) showGlossary() {
	d := dialog.NewCustom("Glossary", "Close", glossaryContent(), st.win)
	d.Resize(dialogSize)
	d.Show()
}

// aboutText is Help › About: what telltale is, its version and the cautions.
func aboutText() string {
	return "telltale " + version.String() + "\n\n" +
		"telltale trains a one-dimensional convolutional text classifier (Kim 2014) on your labeled data, " +
		"shows what each filter responds to, explains why a text gets its label, and looks for filters that key on spurious cues.\n\n" +
		"Cautions\n" +
		"• Explanations describe the model, not the world.\n" +
		"• Validate a model on data of your own before you use it, and never use it alone for decisions about people.\n" +
		"• Follow the laws and rules of the place where it is used."
}

// showAbout shows Help › About.
func (st *State) showAbout() {
	body := widget.NewLabel(aboutText())
	body.Wrapping = fyne.TextWrapWord
	d := dialog.NewCustom("About telltale", "Close", body, st.win)
	d.Resize(fyne.NewSize(dialogSize.Width, 360))
	d.Show()
}
