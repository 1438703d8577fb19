// Package render writes crossform's results: plain-text tables for the
// terminal, CSV and JSON for pipelines, DOT graphs, SVG plots and HTML. It
// computes nothing: every figure it prints was computed by dataset, assoc,
// cluster or rules. Output is deterministic: callers pass sorted results and
// no map order or clock reaches the bytes written.
package render
