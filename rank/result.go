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
	// Series holds the joint ranking of each series (DESIGN §6); its
	// comparisons keep their own observed and predicted values above.
	Series []SeriesResult
}

// SeriesResult is the joint explanation of the comparisons of one series.
type SeriesResult struct {
	Name        string
	Comparisons []string
	// Kind is "years" (repeated years of one treatment) or "dose" (dose
	// levels of one addition, the response scaled with the rate).
	Kind string
	// Hypotheses sorted by joint posterior; Predicted keyed
	// "comparison/observable".
	Hypotheses []Hypothesis
	// Measurements are those of the member comparison MeasurementsAt,
	// where the best measurement tells most (ties go to the latest).
	Measurements   []Measurement
	MeasurementsAt string
	Leading        []string
	Warnings       []string
	NoFit          bool
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
	// OutcomeGridStep is the step of the information integral's outcome
	// grid, in measurement-noise sds.
	OutcomeGridStep float64
}

// ComparisonResult ranks the explanations of one comparison.
type ComparisonResult struct {
	Name     string
	Years    *float64
	Observed []study.Observed
	// Treatment is what was applied to the treatment arm in every
	// hypothesis (DESIGN §4).
	Treatment Treatment
	// RuledOut are undeclared sources the site context makes impossible,
	// named once in a note rather than ranked.
	RuledOut []string
	// Series is the name of the series the comparison belongs to; its
	// hypotheses' posteriors and magnitudes are then the series' joint ones.
	Series string
	// Steady is set for a contrast read at the new steady state; ShiftsOnly
	// when the shifts came from a paper without group levels.
	Steady, ShiftsOnly bool
	// FittedSite is the site model fitted to the controls' absolute values
	// that the ranking used (DESIGN §5); nil when not fitted.
	FittedSite *SiteFit
	// Hypotheses sorted by posterior, highest first.
	Hypotheses []Hypothesis
	// Measurements sorted by information gain, highest first;
	// MeasurementsAt names the comparison they were scored at where that
	// is not this one (a series' view of its members).
	Measurements   []Measurement
	MeasurementsAt string
	// Leading are the hypothesis ids the measurements were scored against.
	Leading []string
	// Paths are predicted shift trajectories of the observed observables
	// under the leading hypotheses (for figures); Timeline marks when the
	// treatment begins and when its time-limited parts end.
	Paths    []Path
	Timeline []Event
	// ReplicatesAssumed is the replicate count used for measurement noise.
	ReplicatesAssumed int
	// Draws is the number of nuisance draws the ranking finally used for
	// the hypotheses with a magnitude (adaptive, DESIGN §5), and
	// TreatmentAloneDraws those of the treatment alone (up to
	// treatmentAloneDraws times more: one forward run each).
	Draws, TreatmentAloneDraws int
	Warnings                   []string
	// NoFit is set when the best hypothesis fails its fit check.
	NoFit bool
}

// Treatment is the known treatment as applied: the declared additions and
// management with the typical sizes of their uncertain parts (the draws
// vary them within their knowledge ranges).
type Treatment struct {
	Additions  []AppliedAddition
	Management []AppliedManagement
	// Severity of a fire as given ("" when drawn over all three).
	Severity string
	// Context lists the declared management tags that only set the
	// priors (limed, drained, fertilized, …), in the study's order.
	Context []string
}

// AppliedAddition is a declared input of a source.
type AppliedAddition struct {
	Source, Label string
	RateKgPerHaYr float64
	// D15N is the δ15N used: measured, or the source's typical value.
	D15N          float64
	Measured      bool
	DurationYears float64
}

// AppliedManagement is a management tag that acts on the model, with what
// it does at typical sizes.
type AppliedManagement struct {
	Tag, Label string
	// Actions describe each move and rate change with its typical size
	// and range.
	Actions []string
	Refs    []string
}

// Empty reports whether nothing was applied.
func (t Treatment) Empty() bool { return len(t.Additions) == 0 && len(t.Management) == 0 }

// Hypothesis is one scored candidate (a single knob or a pair).
type Hypothesis struct {
	ID    string
	Label string
	// Direction is "more" or "less" for a single process response, ""
	// for none, a source and a pair.
	Direction string
	Mechanism string
	Refs      []string
	Tests     []string
	Posterior float64
	// PosteriorMCSE is the Monte Carlo standard error of Posterior from the
	// finite number of nuisance draws.
	PosteriorMCSE float64
	// LogEvidence is the natural log of the marginal likelihood.
	LogEvidence float64
	// PriorProb is the prior probability after context rules, normalised
	// over the hypotheses scored.
	PriorProb   float64
	Adjustments []rules.Adjustment
	// Magnitudes holds one summary per knob (two for a pair, none for "none").
	Magnitudes []Magnitude
	// Duration is the length of a pulse response (nil when sustained).
	Duration *Duration
	// Predicted shift of each observed observable: posterior mean and sd.
	Predicted map[string]Moments
	Fit       Fit
	// Indistinguishable is set when the candidate's predictions stay within
	// the noise over its whole prior: its weight is counted with "none".
	Indistinguishable bool
	// MaxSignal is the largest departure of the predictions from none's
	// over the prior, in observed standard errors.
	MaxSignal float64
	Pair      bool
}

// Magnitude summarises a knob's posterior, typed so that renderers never
// infer meaning from ids or unit strings (DESIGN §5, §7).
type Magnitude struct {
	Candidate string
	// Kind is share, transfer-ratio, nitrate-share or input.
	Kind string
	// Direction is more or less for a response, "" for a source.
	Direction string
	// Process names the response without direction ("nitrification") or
	// the source; Of says what a share is of ("the NH4+ outflow").
	Process   string
	Of        string
	Processes []string
	// Source is the knowledge source id of an undeclared-source candidate
	// ("" for a process response).
	Source string
	// Baseline is the no-change value on the nominal site (a share, the
	// fixation rate; 0 for an undeclared source).
	Baseline float64
	// Best is the posterior median; Low and High the 90 % interval.
	Best, Low, High float64
	Unit            string
	// AtBound says which prior bound the interval reaches: "low", "high",
	// "both" or "" (then "≤ High", "≥ Low" or "anywhere in the prior").
	AtBound             string
	PriorLow, PriorHigh float64
	// Flux is what the magnitude means as a flux at the observation time
	// (nil where it does not apply).
	Flux *FluxImplied
	// Modes holds the two modes of a posterior that has two separated ones
	// (then Best, Low and High span both and should not be read as one
	// interval); nil otherwise.
	Modes []Mode
}

// Mode is one mode of a two-mode posterior: its median, 90 % interval and
// the share of the posterior it holds.
type Mode struct {
	Best, Low, High float64
	Mass            float64
}

// Duration is a pulse's length in years: posterior median, 90 % interval
// and the prior bound it reaches ("low", "high", "both" or "").
type Duration struct {
	Best, Low, High     float64
	PriorLow, PriorHigh float64
	AtBound             string
}

// FluxImplied is the flux of a response's processes at the observation
// time under the treatment (for a pulse: in the middle of the pulse),
// against the same flux at baseline, over posterior samples (kg N/ha/yr;
// ratio new/baseline; Baseline is the median of the draws' baselines).
type FluxImplied struct {
	// AtYears is the (median) time after the treatment began at which the
	// flux was evaluated, 0 at a new steady state; Pulse is set when that
	// is the middle of a pulse response.
	AtYears                  float64
	Pulse                    bool
	Baseline                 float64
	Median, Low, High        float64
	Ratio, RatioLow, RatioHi float64
	// HasRatio is false when the baseline flux is zero (a new input).
	HasRatio bool
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

// Path is the predicted shift of observables over time under a
// hypothesis: at each time the median (Shifts) and the 5–95 % band (Low,
// High) over posterior samples of its magnitudes and nuisance draws.
type Path struct {
	Hypothesis string
	Years      []float64
	Shifts     map[string][]float64
	Low, High  map[string][]float64
}

// Event is a moment of the treatment's time course, for figures.
type Event struct {
	Years float64
	Label string
}
