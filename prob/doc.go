// Package prob holds the probability distributions that power planning and
// analysis share: the noncentral F and noncentral t distributions (Poisson
// mixtures of regularised incomplete beta functions) and the studentized range
// distribution (double numerical integration).
//
// It is a leaf package: it imports only the standard library and gonum. Central
// distributions (F, t, chi-squared, normal) come from gonum's stat/distuv and
// are not wrapped here.
//
// Each function documents its definition, domain, behaviour outside the
// domain, the published method it follows and the accuracy measured against
// outside references in the package tests.
package prob
