// Package fatigue is the root of hulltally's pure computation: seawater
// depth and pressure, load transfer, rainflow counting, S-N curves, damage
// summation and the evidence of damage. Nothing under fatigue/ does I/O,
// reads a clock, touches a database or keeps package-level mutable state;
// every function takes plain values and returns plain values, so each one
// can be tested against published references.
package fatigue
