package render

import (
	"bytes"
	"cmp"
	"fmt"
	"image/color"
	"math"
	"slices"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"
	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgsvg"
)

// MaxFigurePoints is the largest number of points a scatter-type figure
// draws. Above it the points are thinned systematically (every k-th point
// in the order of the x value, plus the most extreme residuals) and the
// figure says so in its Note.
const MaxFigurePoints = 2000

// Figure is one chart of the report: an inline SVG plus the words that go
// with it. Data keeps the numbers drawn, so tests can check the content of
// a figure and not only that it exists.
type Figure struct {
	ID      string // stable identifier, e.g. "mixed-log/qq"
	Title   string
	Caption string
	Note    string // thinning or other drawing notes; empty when all points are shown
	SVG     string // an <svg> element, without XML prolog
	Data    PlotData
}

// PlotData holds the plotted coordinates of a figure's main layer.
type PlotData struct {
	X, Y []float64
	// Lower and Upper are a band (QQ envelope) or interval ends (means).
	Lower, Upper []float64
	Labels       []string
}

// Palette: a colour-blind-safe set chosen for furrow (distinguishable under
// the common colour-vision deficiencies; cf. Okabe & Ito 2008, common
// practice), deep ink for points, muted earth tones for bands.
var (
	inkColor    = color.RGBA{R: 0x1d, G: 0x2a, B: 0x2f, A: 0xff}
	pointColor  = color.NRGBA{R: 0x00, G: 0x5f, B: 0x8a, A: 0xd0}
	accentColor = color.RGBA{R: 0xc2, G: 0x5a, B: 0x00, A: 0xff}
	bandColor   = color.NRGBA{R: 0x8f, G: 0xb8, B: 0x9a, A: 0x80}
	seriesColor = []color.Color{
		color.RGBA{R: 0x00, G: 0x5f, B: 0x8a, A: 0xff},
		color.RGBA{R: 0xc2, G: 0x5a, B: 0x00, A: 0xff},
		color.RGBA{R: 0x2d, G: 0x6a, B: 0x4f, A: 0xff},
		color.RGBA{R: 0x8a, G: 0x3f, B: 0x7a, A: 0xff},
		color.RGBA{R: 0x6b, G: 0x6b, B: 0x20, A: 0xff},
		color.RGBA{R: 0x3a, G: 0x3a, B: 0x3a, A: 0xff},
	}
)

const (
	figWidth  = 5.2 * vg.Inch
	figHeight = 3.4 * vg.Inch
)

func newPlot(title, xlab, ylab string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.Title.TextStyle.Font.Size = vg.Points(11)
	p.X.Label.Text = xlab
	p.Y.Label.Text = ylab
	for _, ax := range []*plot.Axis{&p.X, &p.Y} {
		ax.Label.TextStyle.Font.Size = vg.Points(9.5)
		ax.Tick.Label.Font.Size = vg.Points(8.5)
		ax.Color = inkColor
		ax.Tick.Color = inkColor
	}
	p.Title.TextStyle.Font.Variant = "Sans"
	p.X.Label.TextStyle.Font.Variant = "Sans"
	p.Y.Label.TextStyle.Font.Variant = "Sans"
	p.X.Tick.Label.Font.Variant = "Sans"
	p.Y.Tick.Label.Font.Variant = "Sans"
	p.Legend.TextStyle.Font.Variant = "Sans"
	g := plotter.NewGrid()
	g.Vertical.Color = color.Gray{Y: 0xe4}
	g.Horizontal.Color = color.Gray{Y: 0xe4}
	p.Add(g)
	return p
}

// nominalX labels the x axis with levels and leaves half a slot of room on
// each side.
func nominalX(p *plot.Plot, levels []string) {
	p.NominalX(levels...)
	p.X.Min = -0.5
	p.X.Max = float64(len(levels)) - 0.5
}

// render draws p into an SVG string without the XML prolog.
func render(p *plot.Plot, w, h vg.Length) (string, error) {
	c := vgsvg.New(w, h)
	p.Draw(draw.New(c))
	var b bytes.Buffer
	if _, err := c.WriteTo(&b); err != nil {
		return "", fmt.Errorf("drawing figure %q: %w", p.Title.Text, err)
	}
	s := b.String()
	if i := strings.Index(s, "<svg"); i > 0 {
		s = s[i:]
	}
	return s, nil
}

func scatter(xs, ys []float64, clr color.Color, radius vg.Length) (*plotter.Scatter, error) {
	pts := make(plotter.XYs, len(xs))
	for i := range xs {
		pts[i].X, pts[i].Y = xs[i], ys[i]
	}
	s, err := plotter.NewScatter(pts)
	if err != nil {
		return nil, err
	}
	s.GlyphStyle.Color = clr
	s.GlyphStyle.Radius = radius
	s.GlyphStyle.Shape = draw.CircleGlyph{}
	return s, nil
}

func hline(p *plot.Plot, y float64) {
	l := plotter.NewFunction(func(float64) float64 { return y })
	l.Color = accentColor
	l.Width = vg.Points(1)
	l.Dashes = []vg.Length{vg.Points(4), vg.Points(3)}
	p.Add(l)
}

// thin returns the indices to draw when there are more than max points:
// the k most extreme values of key are always kept, the rest is a
// systematic sample in the order of by.
func thin(by, key []float64, max int) (idx []int, note string) {
	n := len(by)
	idx = make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	if n <= max {
		return idx, ""
	}
	slices.SortStableFunc(idx, func(a, b int) int { return cmp.Compare(by[a], by[b]) })
	keep := make(map[int]bool, max)
	ext := slices.Clone(idx)
	slices.SortStableFunc(ext, func(a, b int) int { return cmp.Compare(math.Abs(key[b]), math.Abs(key[a])) })
	nExt := max / 20
	for _, i := range ext[:nExt] {
		keep[i] = true
	}
	step := float64(n) / float64(max-nExt)
	for j := 0; j < max-nExt; j++ {
		keep[idx[int(float64(j)*step)]] = true
	}
	out := make([]int, 0, len(keep))
	for _, i := range idx {
		if keep[i] {
			out = append(out, i)
		}
	}
	return out, fmt.Sprintf("Showing %d of %d points: a systematic sample along the x axis plus the %d largest |residuals|.", len(out), n, nExt)
}

// ResidualsVersusFitted draws residuals against fitted values with a zero
// line: an even band means equal variance; a widening cone is the classic
// failure.
func ResidualsVersusFitted(id string, fitted, resid []float64) (Figure, error) {
	if len(fitted) != len(resid) || len(resid) == 0 {
		return Figure{}, fmt.Errorf("residual plot %s: %d fitted values and %d residuals", id, len(fitted), len(resid))
	}
	idx, note := thin(fitted, resid, MaxFigurePoints)
	xs, ys := pick(fitted, idx), pick(resid, idx)
	p := newPlot("Residuals against fitted values", "fitted value (analysis scale)", "residual")
	s, err := scatter(xs, ys, pointColor, vg.Points(2))
	if err != nil {
		return Figure{}, err
	}
	p.Add(s)
	hline(p, 0)
	svg, err := render(p, figWidth, figHeight)
	return Figure{ID: id, Title: "Residuals against fitted values",
		Caption: "Each point is one observation. The residuals should form an even band around zero; a cone that widens with the fitted value suggests unequal variance.",
		Note:    note, SVG: svg, Data: PlotData{X: xs, Y: ys}}, err
}

// QQPoints returns the normal quantile-quantile coordinates of x: the
// theoretical quantiles at Blom's plotting positions (i - 3/8)/(n + 1/4)
// (Blom 1958; common practice) and the sorted values, plus a pointwise 95%
// envelope from the exact distribution of uniform order statistics,
// U(i) ~ Beta(i, n - i + 1), mapped through the normal with the sample
// mean and standard deviation.
func QQPoints(x []float64) (theo, sorted, lower, upper []float64) {
	theo, sorted = qqCoordinates(x)
	all := make([]int, len(x))
	for i := range all {
		all[i] = i
	}
	lower, upper = qqEnvelope(sorted, all)
	return theo, sorted, lower, upper
}

// qqCoordinates returns Blom's normal quantiles and the sorted values.
func qqCoordinates(x []float64) (theo, sorted []float64) {
	n := len(x)
	sorted = slices.Clone(x)
	slices.Sort(sorted)
	theo = make([]float64, n)
	for i := 0; i < n; i++ {
		theo[i] = distuv.UnitNormal.Quantile((float64(i+1) - 0.375) / (float64(n) + 0.25))
	}
	return theo, sorted
}

// qqEnvelope returns the pointwise 95% envelope at the order statistics
// idx (0-based ranks) of the sorted sample; each point costs two Beta
// quantiles, so a thinned figure computes only the points it draws.
func qqEnvelope(sorted []float64, idx []int) (lower, upper []float64) {
	n := len(sorted)
	mean, sd := meanSD(sorted)
	lower = make([]float64, len(idx))
	upper = make([]float64, len(idx))
	norm := distuv.UnitNormal
	for j, i := range idx {
		k := float64(i + 1)
		b := distuv.Beta{Alpha: k, Beta: float64(n) - k + 1}
		lower[j] = mean + sd*norm.Quantile(b.Quantile(0.025))
		upper[j] = mean + sd*norm.Quantile(b.Quantile(0.975))
	}
	return lower, upper
}

// NormalQQ draws the normal QQ plot of the residuals with its pointwise
// 95% envelope and the line mean + sd * z.
func NormalQQ(id string, resid []float64) (Figure, error) {
	if len(resid) < 3 {
		return Figure{}, fmt.Errorf("QQ plot %s: %d residuals, need at least 3", id, len(resid))
	}
	theo, sorted := qqCoordinates(resid)
	idx, note := thin(theo, sorted, MaxFigurePoints)
	lo, hi := qqEnvelope(sorted, idx)
	p := newPlot("Normal QQ plot of residuals", "normal quantile", "residual (sorted)")
	band := make(plotter.XYs, 0, 2*len(idx))
	for j, i := range idx {
		band = append(band, plotter.XY{X: theo[i], Y: hi[j]})
	}
	for j := len(idx) - 1; j >= 0; j-- {
		band = append(band, plotter.XY{X: theo[idx[j]], Y: lo[j]})
	}
	poly, err := plotter.NewPolygon(band)
	if err != nil {
		return Figure{}, err
	}
	poly.Color = bandColor
	poly.LineStyle.Width = 0
	p.Add(poly)
	mean, sd := meanSD(sorted)
	ref := plotter.NewFunction(func(z float64) float64 { return mean + sd*z })
	ref.Color = accentColor
	ref.Width = vg.Points(1)
	p.Add(ref)
	s, err := scatter(pick(theo, idx), pick(sorted, idx), pointColor, vg.Points(2))
	if err != nil {
		return Figure{}, err
	}
	p.Add(s)
	svg, err := render(p, figWidth, figHeight)
	return Figure{ID: id, Title: "Normal QQ plot of residuals",
		Caption: "Sorted residuals against normal quantiles. Points inside the shaded pointwise 95% envelope and along the line are consistent with Gaussian residuals.",
		Note:    note, SVG: svg,
		Data: PlotData{X: pick(theo, idx), Y: pick(sorted, idx), Lower: lo, Upper: hi}}, err
}

// ResidualHistogram draws a histogram of the residuals scaled to a density,
// with the Gaussian curve of the same mean and standard deviation.
func ResidualHistogram(id string, resid []float64) (Figure, error) {
	n := len(resid)
	if n < 3 {
		return Figure{}, fmt.Errorf("histogram %s: %d residuals, need at least 3", id, n)
	}
	bins := int(math.Ceil(math.Log2(float64(n)))) + 1 // Sturges (1926)
	vals := make(plotter.Values, n)
	copy(vals, resid)
	h, err := plotter.NewHist(vals, bins)
	if err != nil {
		return Figure{}, err
	}
	h.Normalize(1)
	h.FillColor = bandColor
	h.LineStyle.Color = inkColor
	h.LineStyle.Width = vg.Points(0.5)
	p := newPlot("Histogram of residuals", "residual", "density")
	p.Add(h)
	mean, sd := meanSD(resid)
	if sd > 0 {
		curve := plotter.NewFunction(func(x float64) float64 {
			return distuv.Normal{Mu: mean, Sigma: sd}.Prob(x)
		})
		curve.Color = accentColor
		curve.Width = vg.Points(1.2)
		p.Add(curve)
	}
	var xs, ys []float64
	for _, b := range h.Bins {
		xs = append(xs, (b.Min+b.Max)/2)
		ys = append(ys, b.Weight)
	}
	svg, err := render(p, figWidth, figHeight)
	return Figure{ID: id, Title: "Histogram of residuals",
		Caption: fmt.Sprintf("%d residuals in %d bins (Sturges' rule), scaled to a density, with the Gaussian curve of the same mean and standard deviation.", n, bins),
		SVG:     svg, Data: PlotData{X: xs, Y: ys}}, err
}

// BoxPoints draws, for each level of a factor, a box (quartiles and
// median, whiskers to the most extreme value within 1.5 IQR) with the
// individual points beside it.
func BoxPoints(id, factor, response string, levels []string, group []string, values []float64) (Figure, error) {
	if len(group) != len(values) || len(values) == 0 {
		return Figure{}, fmt.Errorf("box plot %s: %d groups and %d values", id, len(group), len(values))
	}
	p := newPlot(response+" by "+factor, factor, response)
	pos := map[string]int{}
	for i, l := range levels {
		pos[l] = i
	}
	var data PlotData
	for i, l := range levels {
		var v plotter.Values
		for j, g := range group {
			if g == l && !math.IsNaN(values[j]) {
				v = append(v, values[j])
			}
		}
		if len(v) == 0 {
			continue
		}
		b, err := plotter.NewBoxPlot(vg.Points(18), float64(i), v)
		if err != nil {
			return Figure{}, err
		}
		b.BoxStyle.Color = inkColor
		b.FillColor = bandColor
		b.MedianStyle.Color = accentColor
		b.MedianStyle.Width = vg.Points(1.5)
		p.Add(b)
		pts := thinValues(v, len(values))
		xs := make([]float64, len(pts))
		for k := range xs {
			xs[k] = float64(i) + 0.3 + 0.12*(float64(k%7)/6-0.5)
		}
		s, err := scatter(xs, pts, pointColor, vg.Points(1.6))
		if err != nil {
			return Figure{}, err
		}
		p.Add(s)
		data.Labels = append(data.Labels, l)
		data.X = append(data.X, float64(i))
		data.Y = append(data.Y, b.Median)
		data.Lower = append(data.Lower, b.Quartile1)
		data.Upper = append(data.Upper, b.Quartile3)
	}
	nominalX(p, levels)
	note := ""
	if len(values) > MaxFigurePoints {
		note = fmt.Sprintf("Boxes use all %d values; the points beside them are a systematic sample of about %d, smallest and largest of each group included.", len(values), MaxFigurePoints)
	}
	svg, err := render(p, figWidth, figHeight)
	return Figure{ID: id, Title: response + " by " + factor, Note: note,
		Caption: "Boxes span the quartiles with the median marked; whiskers reach the most extreme value within 1.5 times the interquartile range; every observation is drawn beside its box.",
		SVG:     svg, Data: data}, err
}

// CellMeans draws the cell-means (interaction) plot of two factors: the mean
// of the response for each level of a (x axis), one line per level of b.
// Parallel lines suggest additivity.
func CellMeans(id, aName, bName, response string, aLevels, bLevels []string, a, b []string, values []float64) (Figure, error) {
	if len(a) != len(values) || len(b) != len(values) {
		return Figure{}, fmt.Errorf("cell-means plot %s: factor and value lengths differ", id)
	}
	p := newPlot("Cell means of "+response, aName, "mean "+response)
	var data PlotData
	for j, bl := range bLevels {
		var pts plotter.XYs
		for i, al := range aLevels {
			var s float64
			var n int
			for k := range values {
				if a[k] == al && b[k] == bl && !math.IsNaN(values[k]) {
					s += values[k]
					n++
				}
			}
			if n == 0 {
				continue
			}
			m := s / float64(n)
			pts = append(pts, plotter.XY{X: float64(i), Y: m})
			data.X = append(data.X, float64(i))
			data.Y = append(data.Y, m)
			data.Labels = append(data.Labels, al+" | "+bl)
		}
		if len(pts) == 0 {
			continue
		}
		l, s, err := plotter.NewLinePoints(pts)
		if err != nil {
			return Figure{}, err
		}
		c := seriesColor[j%len(seriesColor)]
		l.Color, s.Color = c, c
		l.Width = vg.Points(1.3)
		s.Shape = glyphFor(j)
		p.Add(l, s)
		p.Legend.Add(bName+" "+bl, l, s)
	}
	nominalX(p, aLevels)
	p.Legend.Top = true
	p.Legend.TextStyle.Font.Size = vg.Points(8)
	p.Legend.TextStyle.Font.Variant = "Sans"
	svg, err := render(p, figWidth, figHeight)
	return Figure{ID: id, Title: "Cell means of " + response + ": " + aName + " by " + bName,
		Caption: "Mean of each cell; one line per level of " + bName + ". Roughly parallel lines are consistent with additive effects.",
		SVG:     svg, Data: data}, err
}

// UnitLines draws one line per experimental unit across the levels of the
// repeated factor, so the change within each unit can be seen.
func UnitLines(id, repeatName, response string, levels []string, unit, level []string, values []float64) (Figure, error) {
	if len(unit) != len(values) || len(level) != len(values) {
		return Figure{}, fmt.Errorf("unit-lines plot %s: lengths differ", id)
	}
	pos := map[string]int{}
	for i, l := range levels {
		pos[l] = i
	}
	byUnit := map[string]plotter.XYs{}
	var order []string
	for k, u := range unit {
		i, ok := pos[level[k]]
		if !ok || math.IsNaN(values[k]) {
			continue
		}
		if _, seen := byUnit[u]; !seen {
			order = append(order, u)
		}
		byUnit[u] = append(byUnit[u], plotter.XY{X: float64(i), Y: values[k]})
	}
	slices.Sort(order)
	note := ""
	if len(order) > MaxFigurePoints/4 {
		keep := MaxFigurePoints / 4
		step := float64(len(order)) / float64(keep)
		var thinned []string
		for j := 0; j < keep; j++ {
			thinned = append(thinned, order[int(float64(j)*step)])
		}
		note = fmt.Sprintf("Showing %d of %d units: a systematic sample in unit order.", keep, len(order))
		order = thinned
	}
	p := newPlot(response+" per unit across "+repeatName, repeatName, response)
	var data PlotData
	for _, u := range order {
		pts := byUnit[u]
		slices.SortFunc(pts, func(a, b plotter.XY) int { return cmp.Compare(a.X, b.X) })
		l, err := plotter.NewLine(pts)
		if err != nil {
			return Figure{}, err
		}
		l.Color = color.NRGBA{R: 0x00, G: 0x5f, B: 0x8a, A: 0x70}
		l.Width = vg.Points(0.8)
		p.Add(l)
		for _, pt := range pts {
			data.X = append(data.X, pt.X)
			data.Y = append(data.Y, pt.Y)
			data.Labels = append(data.Labels, u)
		}
	}
	nominalX(p, levels)
	svg, err := render(p, figWidth, figHeight)
	return Figure{ID: id, Title: response + " per unit across " + repeatName,
		Caption: "One line per experimental unit joining its measurements at each level of " + repeatName + ".",
		Note:    note, SVG: svg, Data: data}, err
}

// MeansWithCI draws estimated marginal means with their confidence
// intervals, one row per level.
func MeansWithCI(id, title, scale string, labels []string, est, lower, upper []float64) (Figure, error) {
	n := len(labels)
	if len(est) != n || len(lower) != n || len(upper) != n || n == 0 {
		return Figure{}, fmt.Errorf("means plot %s: lengths differ", id)
	}
	p := newPlot(title, "", scale)
	pts := make(plotter.XYs, n)
	errs := make(plotter.YErrors, n)
	for i := range labels {
		pts[i] = plotter.XY{X: float64(i), Y: est[i]}
		errs[i].Low = est[i] - lower[i]
		errs[i].High = upper[i] - est[i]
	}
	bars, err := plotter.NewYErrorBars(struct {
		plotter.XYer
		plotter.YErrorer
	}{pts, errs})
	if err != nil {
		return Figure{}, err
	}
	bars.LineStyle.Color = inkColor
	bars.LineStyle.Width = vg.Points(1.2)
	bars.CapWidth = vg.Points(8)
	xs := make([]float64, n)
	for i := range xs {
		xs[i] = float64(i)
	}
	s, err := scatter(xs, est, accentColor, vg.Points(3.2))
	if err != nil {
		return Figure{}, err
	}
	p.Add(bars, s)
	nominalX(p, labels)
	svg, err := render(p, figWidth, figHeight)
	return Figure{ID: id, Title: title,
		Caption: "Estimated marginal means with their confidence intervals, on the " + scale + ".",
		SVG:     svg, Data: PlotData{X: xs, Y: est, Lower: lower, Upper: upper, Labels: labels}}, err
}

// thinValues returns the group's values to draw as points: all of them
// when the figure has at most MaxFigurePoints values in all, otherwise a
// systematic sample of the sorted values in proportion to the group's size,
// the smallest and largest always included.
func thinValues(v []float64, total int) []float64 {
	if total <= MaxFigurePoints || len(v) <= 2 {
		return v
	}
	keep := max(2, len(v)*MaxFigurePoints/total)
	sorted := slices.Clone(v)
	slices.Sort(sorted)
	out := make([]float64, 0, keep)
	step := float64(len(sorted)-1) / float64(keep-1)
	for j := 0; j < keep; j++ {
		out = append(out, sorted[int(math.Round(float64(j)*step))])
	}
	return out
}

func glyphFor(i int) draw.GlyphDrawer {
	switch i % 4 {
	case 0:
		return draw.CircleGlyph{}
	case 1:
		return draw.SquareGlyph{}
	case 2:
		return draw.TriangleGlyph{}
	}
	return draw.PlusGlyph{}
}

func pick(x []float64, idx []int) []float64 {
	out := make([]float64, len(idx))
	for j, i := range idx {
		out[j] = x[i]
	}
	return out
}

// meanSD returns the mean and the (n-1) standard deviation by two passes.
func meanSD(x []float64) (mean, sd float64) {
	n := float64(len(x))
	for _, v := range x {
		mean += v
	}
	mean /= n
	var ss, c float64
	for _, v := range x {
		d := v - mean
		ss += d * d
		c += d
	}
	if n > 1 {
		sd = math.Sqrt((ss - c*c/n) / (n - 1))
	}
	return mean, sd
}
