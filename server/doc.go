// Package server is glowlog's application layer: the command-line
// commands (analyze, instrument) and, as it is built, the web application.
// It reads files, wires the diag packages together and writes results; the
// physics stays in package diag.
package server
