package main

import "strings"

// decisionSupportNotice is the sentence every text report ends with (results support, and never replace, the decisions of the national authority).
const decisionSupportNotice = "Results are decision support: the treaty text, national law, the national authority and licensed practice prevail."

// footerWidth is the longest footer line, in bytes, unless a single word is longer.
const footerWidth = 88

// reportFooter returns the footer every text report ends with: a rule, the decision-support
// notice on one line, then the safety cautions passed in (flammable and toxic refrigerant
// cautions from the catalogue, asphyxiation, frostbite, decomposition), each once, in the
// order first given, each wrapped at footerWidth. Blank cautions are dropped, and so are
// the catalogue's own decision-support reminders, which the notice already states. The
// footer ends with a newline.
func reportFooter(cautions []string) string {
	var b strings.Builder
	b.WriteString("--\n")
	b.WriteString(decisionSupportNotice + "\n") // one line, so that it can be searched for whole
	seen := map[string]bool{}
	first := true
	for _, c := range cautions {
		c = strings.Join(strings.Fields(c), " ")
		if c == "" || seen[c] || strings.Contains(strings.ToLower(c), "decision support") {
			continue
		}
		seen[c] = true
		if first {
			b.WriteString("Safety cautions:\n")
			first = false
		}
		b.WriteString(footerWrap(c, "  - ", "    ", footerWidth))
	}
	return b.String()
}

// footerWrap wraps text into lines of at most width bytes; the first line starts with
// first, the others with rest.
func footerWrap(text, first, rest string, width int) string {
	var b strings.Builder
	line, prefix := first, first
	for _, word := range strings.Fields(text) {
		if len(line) > len(prefix) && len(line)+1+len(word) > width {
			b.WriteString(line + "\n")
			line, prefix = rest, rest
		}
		if len(line) > len(prefix) {
			line += " "
		}
		line += word
	}
	b.WriteString(line + "\n")
	return b.String()
}
