package rank

import (
	"nlens/rank/study"
	"nlens/rules"
)

// Result is the outcome of explaining a study.
type Result struct {
	Version    string
	Seed       uint64
	Draws      int
	ModelError float64 // σ_model, ‰
	StudyTitle string
	StudyFile  string
	SiteRef    string
	SiteID     string
	// SiteDescription is the site model's one-line description.
	SiteDescription string
	// Context is the study's site context as the rules read it.
	Context rules.Context
	// RulesFiles are user rules files added with --rules; Demo marks a run
	// of the embedded demo study (both set by the caller, for Methods).
	RulesFiles  []string
	Demo        bool
	Method      Method
	Comparisons []ComparisonResult
}

// Method records the settings a reader needs to reproduce a run.
type Method struct {
	Draws             int
	ModelErrorPermil  float64
	ModelErrorLog     float64
	LevelSDPermil     float64
	LevelSDLog        float64
	CoarseNodes       int
	FinePoints        int
	PairCoarseNodes   int
	PairFinePoints    int
	PairsFrom         int
	NoneShare         float64
	PairPrior         float64
	SamplesPerLeading int
	HermiteNodes      int
}

// ComparisonResult ranks the explanations of one comparison.
type ComparisonResult struct {
	Name     string
	Years    *float64
	Observed []study.Observed
	// Hypotheses sorted by posterior, highest first.
	Hypotheses []Hypothesis
	// Measurements sorted by information gain, highest first.
	Measurements []Measurement
	// Leading are the hypothesis ids the measurements were scored against.
	Leading []string
	// Paths are predicted shift trajectories of the observed observables
	// under the leading hypotheses (for figures).
	Paths []Path
	// ReplicatesAssumed is the replicate count used for measurement noise.
	ReplicatesAssumed int
	Warnings          []string
	// NoFit is set when the best hypothesis fails its fit check.
	NoFit bool
}

// Hypothesis is one scored candidate (a single knob or a pair).
type Hypothesis struct {
	ID        string
	Label     string
	Mechanism string
	Refs      []string
	Tests     []string
	Posterior float64
	// LogEvidence is the natural log of the marginal likelihood.
	LogEvidence float64
	// PriorProb is the prior probability after context rules, normalised
	// over the hypotheses scored.
	PriorProb   float64
	Adjustments []rules.Adjustment
	// Magnitudes holds one summary per knob (two for a pair, none for "none").
	Magnitudes []Magnitude
	// Predicted shift of each observed observable: posterior mean and sd.
	Predicted map[string]Moments
	Fit       Fit
	// Indistinguishable is set when the candidate's predictions stay within
	// the noise over its whole prior: its weight is counted with "none".
	Indistinguishable bool
	// MaxSignal is the largest predicted departure from no change over the
	// prior, in combined standard errors (√χ² of the shift against zero).
	MaxSignal float64
	Pair      bool
}

// Magnitude summarises a knob's posterior: the mode on the fine grid and
// the 5–95 % interval, in the prior's units.
type Magnitude struct {
	Candidate string
	Best      float64
	Low, High float64
	Unit      string
	// Baseline is the no-change value (1 for factors, the site's share for
	// uptake form, 0 for inputs).
	Baseline float64
	Fixed    bool // known in advance (a declared addition)
	// ProbMore is the posterior probability that the magnitude is above its
	// no-change value (more of the process; a higher nitrate share).
	ProbMore float64
}

// Moments are a mean and standard deviation.
type Moments struct {
	Mean, SD float64
}

// Fit is the posterior-predictive χ² check: χ² of the observed shifts
// against the predicted means with observation, model and prediction
// variance; P is its upper-tail probability with DOF degrees of freedom.
type Fit struct {
	Chi2 float64
	DOF  int
	P    float64
}

// Measurement is a catalogue measurement scored for what it would tell.
type Measurement struct {
	ID, Label  string
	Observable string
	Unit       string
	Bits       float64
	Cost       int
	Method     string
	// NoiseSD is the sd of the measured shift assumed (analytical and field
	// spread for the study's replicate count), in the measurement's unit.
	NoiseSD float64
	// Predicted shift under each leading hypothesis (mean and sd including
	// the measurement noise).
	Predicted map[string]Moments
}

// Path is the predicted shift of observables over time under a hypothesis
// at its best magnitude (nominal site).
type Path struct {
	Hypothesis string
	Years      []float64
	Shifts     map[string][]float64
}
