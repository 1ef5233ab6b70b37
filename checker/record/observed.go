package record

// ObservedData is the data behind the report's data-level figures for one
// endpoint: the response as measured on every analysed row (after the
// declared exclusions, before any derivation or transform) with the level
// of each design factor, the unit and the repeated-measure level.
type ObservedData struct {
	// Response is the response column; Values its value per analysed row
	// (null when missing).
	Response string `json:"response"`
	Values   []Num  `json:"values"`
	// Factors are the treatment, factor, block and site columns, in plan order.
	Factors []ObservedFactor `json:"factors"`
	// Unit is the experimental unit per row (empty when the plan has no unit column).
	Unit []string `json:"unit"`
	// Repeat names the repeated-measure column ("" when none); RepeatLevels
	// are its declared levels and RepeatValues its level per row.
	Repeat       string   `json:"repeat"`
	RepeatLevels []string `json:"repeat_levels"`
	RepeatValues []string `json:"repeat_values"`
}

// ObservedFactor is one categorical design column of ObservedData.
type ObservedFactor struct {
	Name   string   `json:"name"`
	Role   string   `json:"role"`
	Levels []string `json:"levels"` // declared levels, in plan order
	Values []string `json:"values"` // level per analysed row
}
