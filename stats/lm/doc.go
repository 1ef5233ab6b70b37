// Package lm fits linear models by least squares and builds ANOVA tables.
package lm
