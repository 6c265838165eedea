// Command glowlog is a hydrogen Balmer-line plasma diagnostics tool: a web
// application (serve) and a command-line analysis engine (analyze).
//
// Usage:
//
//	glowlog [serve]            start the web application (default)
//	glowlog analyze FILE|-     analyse a measurement set, print JSON
//
// See README.md for the input and output fields.
package main

import (
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"strings"

	"glowlog/diag"
	"glowlog/diag/mset"
)

// Exit codes.
const (
	exitOK    = 0
	exitError = 1 // internal failure
	exitInput = 2 // bad input or usage
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr))
}

// run dispatches a subcommand and returns the process exit status.
func run(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	cmd := "serve"
	if len(args) > 0 && !strings.HasPrefix(args[0], "-") {
		cmd, args = args[0], args[1:]
	}
	switch cmd {
	case "analyze":
		return runAnalyze(args, stdin, stdout, stderr)
	case "serve":
		return runServe(args, stderr)
	case "version":
		fmt.Fprintf(stdout, "glowlog %s (%s)\n", diag.EngineVersion, diag.ConstantsSet)
		return exitOK
	case "help", "-h", "--help":
		fmt.Fprint(stdout, usage)
		return exitOK
	}
	fmt.Fprintf(stderr, "glowlog: unknown command %q\n%s", cmd, usage)
	return exitInput
}

const usage = `usage:
  glowlog [serve]              start the web application (default)
  glowlog analyze FILE|-       analyse a measurement set (JSON) and print the result as JSON
  glowlog version              print the version
`

func runServe(args []string, stderr io.Writer) int {
	fs := flag.NewFlagSet("serve", flag.ContinueOnError)
	fs.SetOutput(stderr)
	if err := fs.Parse(args); err != nil {
		return exitInput
	}
	fmt.Fprintln(stderr, "glowlog serve: the web application is not built yet; use `glowlog analyze FILE` (see README.md)")
	return exitError
}

// maxInputBytes bounds what analyze reads from a file or stdin.
const maxInputBytes = mset.MaxBytes

func runAnalyze(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("analyze", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: glowlog analyze FILE|-")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return exitInput
	}
	if fs.NArg() != 1 {
		fmt.Fprintln(stderr, "glowlog analyze: give exactly one measurement-set file, or - for standard input")
		return exitInput
	}
	name := fs.Arg(0)
	var r io.Reader = stdin
	source := "stdin"
	if name != "-" {
		f, err := os.Open(name)
		if err != nil {
			fmt.Fprintf(stderr, "glowlog analyze: %v\n", err)
			return exitInput
		}
		defer f.Close()
		r, source = f, name
	}
	data, err := io.ReadAll(io.LimitReader(r, maxInputBytes+1))
	if err != nil {
		fmt.Fprintf(stderr, "glowlog analyze: %s: %v\n", source, err)
		return exitInput
	}
	m, err := mset.Decode(source, data)
	if err != nil {
		fmt.Fprintf(stderr, "glowlog analyze: %v\n", err)
		return exitInput
	}
	res, err := diag.Analyze(m)
	if err != nil {
		// Analyze fails only on data it cannot use (a width narrower than
		// its Gaussian budget, an impossible two-line request, …).
		fmt.Fprintf(stderr, "glowlog analyze: %s: %v\n", source, strings.TrimPrefix(err.Error(), "diag: "))
		return exitInput
	}
	var buf bytes.Buffer
	enc := json.NewEncoder(&buf)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(res); err != nil {
		fmt.Fprintf(stderr, "glowlog analyze: encoding result: %v\n", err)
		return exitError
	}
	if _, err := stdout.Write(buf.Bytes()); err != nil {
		return exitError
	}
	return exitOK
}
