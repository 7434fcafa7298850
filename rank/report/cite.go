package report

import (
	"sort"
	"strings"

	"nlens/knowledge"
)

// Citations in the Markdown report are written in two passes. In the
// first, cite leaves a marker holding the reference keys; once
// the whole text is known, labelRefs decides each reference's label and
// the second pass writes the labels. Two works whose author–year forms
// coincide ("Craine et al. 2015" for craine2015 and craine2015b) get the
// letters a, b, … after the year, but only when both are cited in the same
// document, and the same label is used in the text, the reference list and
// the BibTeX comments.

// Marker runes from the Unicode private-use area: they never occur in
// knowledge-base text or in a study's names once sanitised by plain.
const (
	markOpen   = '\uE000' // parenthetical citation: "(Högberg 1997)"
	markOpenIn = '\uE001' // citation inside parentheses: "Högberg 1997"
	markClose  = '\uE002'
	markKeySep = ","
)

// citer writes citations. Without labels it leaves markers (the first
// pass, which finds what a document cites); with labels it writes them
// directly (the second pass, so that tables are aligned on final text).
type citer struct {
	kb     *knowledge.Base
	labels map[string]string
}

// cite returns a marker for a parenthetical citation of the known keys;
// unknown keys are dropped (the knowledge base checks every key at load, so
// this only guards hand-built results) and no keys give "".
func (c citer) cite(keys ...string) string { return c.mark(markOpen, keys) }

func (c citer) mark(open rune, keys []string) string {
	var known []string
	for _, k := range keys {
		if _, ok := c.kb.Reference(k); ok && !contains(known, k) {
			known = append(known, k)
		}
	}
	if len(known) == 0 {
		return ""
	}
	if c.labels != nil {
		out := make([]string, len(known))
		for i, k := range known {
			out[i] = c.labels[k]
		}
		s := strings.Join(out, "; ")
		if open == markOpen {
			s = "(" + s + ")"
		}
		return s
	}
	return string(open) + strings.Join(known, markKeySep) + string(markClose)
}

// twoPass renders a document with citations: once with markers to learn
// which references it cites and give them labels, then again with the
// labels written in place. render must be deterministic.
func twoPass(kb *knowledge.Base, render func(citer) string) (string, []citedRef) {
	first := render(citer{kb: kb})
	refs := labelRefs(markerKeys(first), kb)
	labels := map[string]string{}
	for _, r := range refs {
		labels[r.Ref.Key] = r.Label
	}
	return render(citer{kb: kb, labels: labels}), refs
}

// citedRef is a reference as cited in one document.
type citedRef struct {
	Ref   knowledge.Reference
	Label string // "Craine et al. 2015a"
	// Suffix is the letter after the year ("a"), or "".
	Suffix string
}

func decodeRune(s string) (rune, int) {
	for _, r := range s {
		return r, len(string(r))
	}
	return 0, 0
}

// markerKeys lists the keys in the markers of text, each once, in order of
// first appearance.
func markerKeys(text string) []string {
	var keys []string
	for {
		i := strings.IndexAny(text, string(markOpen)+string(markOpenIn))
		if i < 0 {
			return keys
		}
		_, size := decodeRune(text[i:])
		text = text[i+size:]
		j := strings.IndexRune(text, markClose)
		if j < 0 {
			return keys
		}
		for _, k := range strings.Split(text[:j], markKeySep) {
			if !contains(keys, k) {
				keys = append(keys, k)
			}
		}
		text = text[j:]
	}
}

// labelRefs gives each cited reference its label. References sharing an
// author–year form are told apart by letters assigned in the order a
// reference list sorts them (author list, then title, then key), which is
// also the order natbib-style BibTeX styles use.
func labelRefs(keys []string, kb *knowledge.Base) []citedRef {
	groups := map[string][]knowledge.Reference{}
	for _, k := range keys {
		r, ok := kb.Reference(k)
		if !ok {
			continue
		}
		groups[r.Cite()] = append(groups[r.Cite()], r)
	}
	var out []citedRef
	for _, base := range sortedKeys(groups) {
		g := groups[base]
		if len(g) == 1 {
			out = append(out, citedRef{Ref: g[0], Label: base})
			continue
		}
		sort.Slice(g, func(i, j int) bool {
			a, b := strings.Join(g[i].Authors, ";"), strings.Join(g[j].Authors, ";")
			if a != b {
				return a < b
			}
			if g[i].Title != g[j].Title {
				return g[i].Title < g[j].Title
			}
			return g[i].Key < g[j].Key
		})
		for i, r := range g {
			suffix := letterSuffix(i)
			out = append(out, citedRef{Ref: r, Label: base + suffix, Suffix: suffix})
		}
	}
	sort.SliceStable(out, func(i, j int) bool { return out[i].Label < out[j].Label })
	return out
}

// letterSuffix is a, b, …, z, then aa, ab, … (never needed in practice).
func letterSuffix(i int) string {
	s := string(rune('a' + i%26))
	if i >= 26 {
		s = letterSuffix(i/26-1) + s
	}
	return s
}

func contains(s []string, v string) bool {
	for _, x := range s {
		if x == v {
			return true
		}
	}
	return false
}
