// Package rainflow counts the load cycles of a hull component's stress (or
// pressure, or strain) history.
package rainflow
