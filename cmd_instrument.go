package main

import (
	"bufio"
	"bytes"
	"encoding/json"
	"flag"
	"fmt"
	"io"
	"os"
	"sort"
	"strconv"
	"strings"

	"glowlog/diag/calib"
)

// InstrumentCommand runs "glowlog instrument": it fits the lines of a
// calibration-lamp spectrum, writes the instrument function (Gaussian and
// Lorentzian FWHM against wavelength) to --out for reuse with
// "glowlog analyze --instrument", and prints the per-line report as JSON.
func InstrumentCommand(args []string, stdout, stderr io.Writer) int {
	fs := flag.NewFlagSet("instrument", flag.ContinueOnError)
	fs.SetOutput(stderr)
	lamps := calib.Lamps()
	names := make([]string, 0, len(lamps))
	for k := range lamps {
		names = append(names, k)
	}
	sort.Strings(names)
	lamp := fs.String("lamp-lines", "", "built-in lamp line list: "+strings.Join(names, ", "))
	linesFile := fs.String("lines", "", "own line list: one air wavelength in nm per line (# comments)")
	name := fs.String("name", "", "name of the instrument function (default: the spectrum file name)")
	out := fs.String("out", "", "write the instrument function (JSON) to this file")
	xUnit := fs.String("x-unit", "", "axis unit of text spectra without a unit in the header: nm, angstrom, um or cm-1")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: glowlog instrument (--lamp-lines NAME | --lines FILE) [--out FILE] LAMP-SPECTRUM")
		fs.PrintDefaults()
	}
	if err := ParseInterleaved(fs, args); err != nil {
		return flagExit(err)
	}
	if fs.NArg() != 1 {
		fs.Usage()
		return ExitInput
	}
	failf := func(format string, a ...any) int {
		fmt.Fprintf(stderr, "glowlog instrument: "+format+"\n", a...)
		return ExitInput
	}
	var lines []calib.LampLine
	switch {
	case *lamp != "" && *linesFile != "":
		return failf("give either --lamp-lines or --lines, not both")
	case *lamp != "":
		l, ok := lamps[strings.ToLower(*lamp)]
		if !ok {
			return failf("unknown --lamp-lines %q (built in: %s)", *lamp, strings.Join(names, ", "))
		}
		lines = l
	case *linesFile != "":
		l, err := readLineList(*linesFile)
		if err != nil {
			return failf("%v", err)
		}
		lines = l
	default:
		return failf("give --lamp-lines NAME or --lines FILE")
	}
	file := fs.Arg(0)
	data, err := readLimited(file, 32<<20)
	if err != nil {
		return failf("%v", err)
	}
	c := &analyzeConfig{format: "auto", xUnit: *xUnit}
	sp, err := c.readSpectrum(file, data)
	if err != nil {
		return failf("%v", err)
	}
	if *name == "" {
		*name = file
	}
	in, reports, err := calib.FitInstrument(*name, sp.WavelengthNM, sp.Counts, lines, calib.FitOptions{})
	if err != nil {
		return failf("%s: %v", file, strings.TrimPrefix(err.Error(), "calib: "))
	}
	if *out != "" {
		var buf bytes.Buffer
		if err := in.WriteJSON(&buf); err != nil {
			return failf("%v", err)
		}
		if err := os.WriteFile(*out, buf.Bytes(), 0o644); err != nil {
			return failf("%v", err)
		}
	}
	enc := json.NewEncoder(stdout)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	if err := enc.Encode(struct {
		Instrument *calib.Instrument  `json:"instrument"`
		Lines      []calib.LineReport `json:"lines"`
	}{in, reports}); err != nil {
		return ExitError
	}
	return ExitOK
}

// readLineList reads a user line list: one air wavelength (nm) per line,
// optionally followed by an element name; # starts a comment.
func readLineList(path string) ([]calib.LampLine, error) {
	b, err := readLimited(path, 1<<20)
	if err != nil {
		return nil, err
	}
	var out []calib.LampLine
	sc := bufio.NewScanner(bytes.NewReader(b))
	for n := 1; sc.Scan(); n++ {
		t := strings.TrimSpace(sc.Text())
		if i := strings.IndexByte(t, '#'); i >= 0 {
			t = strings.TrimSpace(t[:i])
		}
		if t == "" {
			continue
		}
		f := strings.Fields(t)
		v, err := strconv.ParseFloat(f[0], 64)
		if err != nil || !(v > 0) || v > 1e5 {
			return nil, fmt.Errorf("%s:%d: expected an air wavelength in nm, got %q", path, n, f[0])
		}
		el := ""
		if len(f) > 1 {
			el = f[1]
		}
		out = append(out, calib.LampLine{WavelengthAirNM: v, Element: el, Source: "user line list " + path, Verified: false})
	}
	if len(out) == 0 {
		return nil, fmt.Errorf("%s: no wavelengths in the line list", path)
	}
	return out, sc.Err()
}
