package method

// Default is the registry of this build: every check and model kind, in
// the order the plan schema lists them.
var Default = NewRegistry(
	[]*Check{ShapiroWilk, AndersonDarling, Levene, BrownForsythe, Bartlett, BreuschPagan},
	[]*Model{Linear, Mixed, Poisson, Welch, KruskalWallis, Friedman, SignedRank, RankSum, VanElteren},
)
