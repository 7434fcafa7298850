package forward

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"

	"nlens/knowledge"
)

// EncodeOptions control EncodeSite.
type EncodeOptions struct {
	// Comment lines written at the top of the file (without "#").
	Comment []string
	// EffectComments adds, after every transfer whose ε the file does not
	// fix, the knowledge value and range it will take, with the entry's
	// status, so a user starting from the file sees what to replace.
	EffectComments bool
}

// EncodeSite writes the site in the site-file format of DESIGN §3, the
// format ParseSite reads: every number is written in the shortest form that
// reads back to the same float64, so the file parses to the same pools,
// rates, inputs and effects and the same steady state, bit for bit. Values
// the site took from the knowledge base (ε that the file did not fix, an
// input's δ15N from its source) are left to the knowledge base again, so
// uncertainty draws treat them as before. An ε that differs from its
// knowledge value without being fixed (a fitted site's) is written, and a
// file read back takes it as given.
func EncodeSite(w io.Writer, s *Site, kb *knowledge.Base, opt EncodeOptions) error {
	var b bytes.Buffer
	for _, c := range opt.Comment {
		b.WriteString(strings.TrimRight("# "+c, " ") + "\n")
	}
	fmt.Fprintf(&b, "site: %s\n", yamlString(s.ID))
	if s.Description != "" {
		fmt.Fprintf(&b, "description: %s\n", yamlString(s.Description))
	}
	if s.MycorrhizalType != "" {
		fmt.Fprintf(&b, "mycorrhizal_type: %s\n", s.MycorrhizalType)
	}
	if s.LandUse != "" {
		fmt.Fprintf(&b, "land_use: %s\n", s.LandUse)
	}
	if len(s.References) > 0 {
		refs := make([]string, len(s.References))
		for i, r := range s.References {
			refs[i] = yamlString(r)
		}
		fmt.Fprintf(&b, "references: [%s]\n", strings.Join(refs, ", "))
	}
	if s.Note != "" {
		fmt.Fprintf(&b, "note: %s\n", yamlString(s.Note))
	}
	b.WriteString("pools:                          # kg N/ha\n")
	for i, name := range s.Pools {
		fmt.Fprintf(&b, "  %s: %s\n", name, num64(s.PoolKg[i]))
	}
	if s.NitrificationD18OFixed {
		fmt.Fprintf(&b, "nitrate_oxygen:\n  nitrification_d18o: %s\n", num64(s.NitrificationD18O))
	}
	if len(s.Inputs) > 0 {
		b.WriteString("inputs:                         # kg N/ha/yr; δ15N ‰ AIR, δ18O ‰ VSMOW\n")
	}
	for _, in := range s.Inputs {
		var parts []string
		src, hasSrc := kb.Source(in.Source)
		if in.Source != "" {
			parts = append(parts, "source: "+yamlString(in.Source))
		}
		if !hasSrc || src.Pool != s.Pools[in.To] {
			parts = append(parts, "to: "+s.Pools[in.To])
		}
		parts = append(parts, "rate: "+num64(in.RateKgPerHaYr))
		if in.D15NFixed || !hasSrc {
			parts = append(parts, "d15n: "+num64(in.D15N))
		}
		if in.D18OFixed {
			parts = append(parts, "d18o: "+num64(in.D18O))
		}
		fmt.Fprintf(&b, "  - {%s}\n", strings.Join(parts, ", "))
	}
	if len(s.Transfers) > 0 {
		b.WriteString("transfers:                      # rate kg N/ha/yr; ε ‰; spread: relative sd of the rate\n")
	}
	for _, t := range s.Transfers {
		to := "out"
		if t.To != Out {
			to = s.Pools[t.To]
		}
		parts := []string{"process: " + t.Process, "from: " + s.Pools[t.From], "to: " + to, "rate: " + num64(t.RateKgPerHaYr)}
		if t.EpsilonFixed || t.Epsilon != t.Effect.EpsilonPermil {
			parts = append(parts, "epsilon: "+num64(t.Epsilon))
		}
		if t.Epsilon18Fixed {
			parts = append(parts, "epsilon18: "+num64(t.Epsilon18))
		}
		if t.Spread > 0 {
			parts = append(parts, "spread: "+num64(t.Spread))
		}
		line := "  - {" + strings.Join(parts, ", ") + "}"
		switch {
		case !opt.EffectComments || t.EpsilonFixed:
		case t.Epsilon != t.Effect.EpsilonPermil:
			line += "  # knowledge " + EffectNote(t.Effect)
		default:
			line += "  # " + EffectNote(t.Effect)
		}
		b.WriteString(line + "\n")
	}
	_, err := w.Write(b.Bytes())
	return err
}

// EffectNote describes where a transfer's ε comes from when the site file
// does not give it: "ε 20 ‰ (12 to 35, from memory)".
func EffectNote(e knowledge.Effect) string {
	rng := ""
	if len(e.RangePermil) == 2 && e.RangePermil[0] != e.RangePermil[1] {
		rng = fmt.Sprintf("%s to %s, ", strconv.FormatFloat(e.RangePermil[0], 'g', 4, 64), strconv.FormatFloat(e.RangePermil[1], 'g', 4, 64))
	}
	return fmt.Sprintf("ε %s ‰ (%s%s)", strconv.FormatFloat(e.EpsilonPermil, 'g', 4, 64), rng, e.Status)
}

// num64 formats a float in the shortest form that parses back exactly.
func num64(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }

// yamlString writes a string as a YAML scalar: plain when it is a simple
// word, otherwise double-quoted with JSON escapes (valid YAML).
func yamlString(v string) string {
	plain := v != ""
	for _, r := range v {
		if !(r >= 'a' && r <= 'z' || r >= 'A' && r <= 'Z' || r >= '0' && r <= '9' || r == '-' || r == '_' || r == '.') {
			plain = false
			break
		}
	}
	if plain && !strings.ContainsAny(v[:1], "-.0123456789") && !isYAMLKeyword(v) {
		return v
	}
	var b bytes.Buffer
	enc := json.NewEncoder(&b)
	enc.SetEscapeHTML(false)
	_ = enc.Encode(v) // a string always encodes
	return strings.TrimSuffix(b.String(), "\n")
}

// isYAMLKeyword reports words that YAML would read as a boolean or null.
func isYAMLKeyword(v string) bool {
	switch strings.ToLower(v) {
	case "true", "false", "yes", "no", "on", "off", "y", "n", "null", "~":
		return true
	}
	return false
}
