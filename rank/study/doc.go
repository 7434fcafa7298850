// Package study reads a study file (DESIGN §6) and its optional samples
// file (CSV in a detected dialect, or an .xlsx workbook) into observed
// shifts with standard errors. 15N atom percent is converted to δ15N with
// R_AIR = 0.0036765 (AtomPercentConversion).
//
// A shift is treatment minus control: in ‰ for δ observables, and
// ln(treatment/control) for pool sizes and fluxes. Its standard error is
// Welch's, √(s_t²/n_t + s_c²/n_c) (on the log scale by the delta method,
// s/mean in place of s), with Welch–Satterthwaite degrees of freedom. The
// control group's absolute values are kept so that the ranking can weight
// how well a site model reproduces them.
//
// Every problem is an error naming the file, the 1-based line (for a
// workbook the sheet and cell, CellError) and the field; nothing is skipped
// silently.
package study
