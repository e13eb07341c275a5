// Package analyze runs the analysis of variance that matches an
// experiment's design: one-way, randomised complete block, factorial, and
// factorial in blocks, fitted by least squares, with Tukey HSD comparisons.
//
// It knows no file format: readers (design/workbook, CSV) hand it a Data
// value of decimal texts and labels.
//
// Numerics. Values are parsed from their decimal text as exact rationals, a
// common shift (the median observation) is subtracted exactly, and only then
// are they converted to float64, so data such as 1000000000000.4 keep every
// digit (the NIST StRD SmLs07–09 datasets need this). The model is fitted by
// Householder QR (gonum lapack64 Geqrf/Ormqr) and each term's sum of squares
// is the squared norm of its block of Qᵀy, never a difference of two
// residual sums, so small effects keep their digits.
package analyze
