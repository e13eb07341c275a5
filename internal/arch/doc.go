// Package arch holds no code: its test checks the package map in
// DEVELOPERS.md (one row per package, with the allot packages it may
// import) against the imports of every package's non-test source files.
package arch
