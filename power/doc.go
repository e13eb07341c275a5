// Package power computes sample size, power and the smallest detectable effect
// for the comparative designs allot lays out, before any unit exists.
//
// Every calculation is exact for its model: the power of an F test is the
// survival function of the noncentral F distribution at the central critical
// value (analyze/prob.NoncentralF), the power of a one-sided t test that of the
// noncentral t distribution. The models are fixed-effects ANOVA with normal
// errors of common variance, as in Cohen (1988), Statistical Power Analysis
// for the Behavioral Sciences, 2nd ed., chapter 8, and the noncentrality
// λ = f²·N used there with N the total number of experimental units.
//
// A calculation supports, and never replaces, review of a study plan by an
// animal-ethics committee, the institution's rules and a qualified
// statistician; the justification text says so.
package power
