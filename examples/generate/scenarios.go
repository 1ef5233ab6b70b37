package main

import (
	"fmt"
	"math"
	"math/rand/v2"
)

// Seeds of the three scenarios. Changing one changes that example's data.
const (
	seedNematodes = 20260301
	seedWheat     = 20260302
	seedSplitPlot = 20260303
)

func newRand(seed uint64) *rand.Rand {
	return rand.New(rand.NewPCG(seed, seed^0x9e3779b97f4a7c15))
}

// nematodes makes the multi-site tomato trial: 6 sites x 4 blocks x 3
// treatments, root-knot juveniles per 100 g soil counted on every plot
// before application and at harvest (long format, one row per plot and
// time).
//
// Counts are log-normal around a site- and block-level density. At
// harvest a few plots are "hot spots" whose count jumps by a large factor
// (a heavy upper tail), so residuals on the log scale are still far from
// Gaussian. Three harvest counts are missing (NA) and one plot has no
// pre-application count, which the plan's exclusion rule removes.
func nematodes() (*table, error) {
	r := newRand(seedNematodes)
	sites := []string{"S1", "S2", "S3", "S4", "S5", "S6"}
	blocks := []string{"B1", "B2", "B3", "B4"}
	treatments := []string{"untreated", "reference", "candidate"}
	// change of log density from application to harvest, per treatment
	growth := map[string]float64{"untreated": 0.65, "reference": -0.80, "candidate": -0.75}

	t := &table{header: []string{"site", "block", "plot", "treatment", "time", "juveniles"}}
	var harvestRows []int
	var baselineRows []int
	for _, site := range sites {
		siteLevel := math.Log(650) + 0.45*r.NormFloat64()
		siteGrowth := 0.15 * r.NormFloat64()
		for bi, block := range blocks {
			blockLevel := 0.2 * r.NormFloat64()
			order := r.Perm(len(treatments)) // randomisation within the block
			for k, ti := range order {
				trt := treatments[ti]
				plot := fmt.Sprintf("%s-%d%d", site, bi+1, k+1)
				before := siteLevel + blockLevel + 0.3*r.NormFloat64()
				after := before + growth[trt] + siteGrowth + 0.25*r.NormFloat64()
				if r.Float64() < 0.15 {
					after += 1.6 + 1.4*r.Float64() // a hot spot at harvest
				}
				baselineRows = append(baselineRows, len(t.rows))
				t.rows = append(t.rows, []cell{text(site), text(block), text(plot), text(trt), text("before"), number(math.Round(math.Exp(before)), 0)})
				harvestRows = append(harvestRows, len(t.rows))
				t.rows = append(t.rows, []cell{text(site), text(block), text(plot), text(trt), text("harvest"), number(math.Round(math.Exp(after)), 0)})
			}
		}
	}
	// Three harvest samples lost, one pre-application sample lost.
	lost := r.Perm(len(harvestRows))
	for _, i := range lost[:3] {
		t.rows[harvestRows[i]][5] = missing()
	}
	var b int
	for {
		b = r.IntN(len(baselineRows))
		// keep the baseline loss on a plot whose harvest count exists
		if !t.rows[baselineRows[b]+1][5].missing {
			break
		}
	}
	t.rows[baselineRows[b]][5] = missing()
	return t, nil
}

// wheat makes the RCBD variety trial: 8 winter wheat varieties (invented
// names; "Norrin" is the check variety) in 4 complete blocks, grain yield
// in t/ha at 15 % moisture, Gaussian plot errors.
func wheat() (*table, error) {
	r := newRand(seedWheat)
	varieties := []string{"Norrin", "Tavel", "Quisbar", "Morlen", "Ebbsford", "Zarnik", "Helvo", "Pardine"}
	effect := []float64{0, 0.55, -0.20, 0.35, 0.90, -0.45, 0.10, 0.60}
	t := &table{header: []string{"block", "plot", "variety", "yield"}}
	for b := range 4 {
		blockEffect := 0.3 * r.NormFloat64()
		order := r.Perm(len(varieties))
		for k, vi := range order {
			y := 8.2 + blockEffect + effect[vi] + 0.32*r.NormFloat64()
			t.rows = append(t.rows, []cell{
				text(fmt.Sprintf("B%d", b+1)),
				text(fmt.Sprintf("%d%02d", b+1, k+1)),
				text(varieties[vi]),
				number(y, 2),
			})
		}
	}
	return t, nil
}

// splitPlot makes the irrigation x nitrogen split-plot: 3 irrigation
// regimes randomised to whole plots within each of 4 blocks, 4 nitrogen
// rates randomised to sub-plots within each whole plot; grain yield in
// t/ha. Whole plots carry their own error (the whole-plot stratum).
func splitPlot() (*table, error) {
	r := newRand(seedSplitPlot)
	regimes := []string{"rainfed", "deficit", "full"}
	regimeEffect := []float64{-1.1, 0, 0.7}
	rates := []string{"N0", "N60", "N120", "N180"}
	rateEffect := []float64{-1.6, -0.3, 0.5, 0.7}
	// nitrogen responds more when water is not limiting
	interaction := [][]float64{
		{0.3, 0.1, -0.2, -0.2},
		{0, 0, 0, 0},
		{-0.3, -0.1, 0.15, 0.25},
	}
	t := &table{header: []string{"block", "irrigation", "nitrogen", "plot", "yield"}}
	for b := range 4 {
		blockEffect := 0.35 * r.NormFloat64()
		for w, ii := range r.Perm(len(regimes)) {
			wholePlot := 0.3 * r.NormFloat64()
			for s, ni := range r.Perm(len(rates)) {
				y := 6.5 + blockEffect + regimeEffect[ii] + wholePlot + rateEffect[ni] + interaction[ii][ni] + 0.25*r.NormFloat64()
				t.rows = append(t.rows, []cell{
					text(fmt.Sprintf("B%d", b+1)),
					text(regimes[ii]),
					text(rates[ni]),
					text(fmt.Sprintf("%d%d%d", b+1, w+1, s+1)),
					number(y, 2),
				})
			}
		}
	}
	return t, nil
}
