// Package report renders nlens results: terminal tables (tablewriter), plain
// text, Markdown with a discussion draft, JSON, BibTeX and SVG/PNG figures
// (gonum/plot). It computes no scores: every number it prints comes from
// package rank or package forward. Output is deterministic: maps are
// printed in sorted or fixed order and floats with fixed formats, so the
// same result gives the same bytes.
//
// Units as printed: δ15N in ‰ vs AIR, δ18O in ‰ vs VSMOW, pools in
// kg N/ha, fluxes in kg N/ha/yr, time in years.
package report
