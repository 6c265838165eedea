package main

import (
	"bytes"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"runtime"
	"strings"
	"sync"

	"glowlog/diag"
	"glowlog/diag/calib"
	"glowlog/diag/mset"
	"glowlog/diag/specfile"
	"glowlog/diag/spectrum"
	"glowlog/server"
)

// Exit codes of the commands.
const (
	ExitOK    = 0
	ExitError = 1 // internal failure
	ExitInput = 2 // bad input or usage
)

// MaxMeasurementBytes bounds one measurement-set file.
const MaxMeasurementBytes = mset.MaxBytes

// analyzeConfig holds the parsed flags of analyze.
type analyzeConfig struct {
	format         string
	xUnit          string
	vacuum         bool
	isotope        string
	instG, instL   float64
	instrumentFile string
	gasT, gasTUnc  float64
	instGUnc       float64
	electronT      float64
	responseUnc    float64
	solveGas       bool
	pressure       float64
	perturber      string
	groundDensity  float64
	unit           string
	darkFile       string
	responseFile   string
	lampFile       string
	irradianceFile string
	greyBodyK      float64
	saturation     float64
	gain, readNE   float64
	correctOffset  bool
	minSNR         float64
	maxUpper       int
	windows        bool
	calibrated     string
	progress       string
	text           bool
	set            map[string]bool // flags given on the command line

	// Loaded once for all files.
	opt spectrum.Options
}

// conditionFlags are the flags that describe measurement conditions; a
// measurement-set file carries its own and may not be combined with them.
var conditionFlags = []string{"isotope", "instrument-fwhm-nm", "instrument-lorentz-fwhm-nm", "instrument",
	"gas-temperature-K", "gas-temperature-unc-K", "solve-gas-temperature", "instrument-fwhm-unc-nm",
	"electron-temperature-K", "response-unc-rel", "pressure-Pa", "perturber",
	"ground-state-density-m3", "intensity-unit", "dark", "response", "lamp", "lamp-irradiance", "grey-body-K",
	"saturation-counts", "gain-e-per-count", "read-noise-e", "correct-offset", "min-snr", "max-upper", "windows",
	"x-unit", "vacuum-axis", "calibrated", "line-shape", "areas", "free-gas-temperature", "free-instrument"}

func analyzeFlags(stderr io.Writer) (*flag.FlagSet, *analyzeConfig) {
	c := &analyzeConfig{}
	fs := flag.NewFlagSet("analyze", flag.ContinueOnError)
	fs.SetOutput(stderr)
	fs.Usage = func() {
		fmt.Fprint(stderr, `usage: glowlog analyze [flags] FILE...
FILE is a measurement set (JSON) or a spectrum (delimited text or JCAMP-DX); - reads standard input.
Several files are analysed in parallel and printed as JSON Lines in the order given.
flags (spectra only):
`)
		fs.PrintDefaults()
	}
	fs.StringVar(&c.format, "format", "auto", "input format: auto, measurement, text or jcamp")
	fs.StringVar(&c.xUnit, "x-unit", "", "axis unit of text spectra without a unit in the header: nm, angstrom, um or cm-1")
	fs.BoolVar(&c.vacuum, "vacuum-axis", false, "the wavelength axis is in vacuum (default: standard air; cm⁻¹ axes are always vacuum)")
	fs.StringVar(&c.isotope, "isotope", "H", "emitter: H or D")
	fs.Float64Var(&c.instG, "instrument-fwhm-nm", 0, "Gaussian FWHM of the instrument function, nm")
	fs.Float64Var(&c.instL, "instrument-lorentz-fwhm-nm", 0, "Lorentzian FWHM of the instrument function, nm")
	fs.StringVar(&c.instrumentFile, "instrument", "", "instrument-function file written by glowlog instrument (overrides the constant widths)")
	fs.Float64Var(&c.gasT, "gas-temperature-K", 0, "gas temperature for Doppler and van der Waals widths, K")
	fs.Float64Var(&c.gasTUnc, "gas-temperature-unc-K", 0, "1σ of the gas temperature, K")
	fs.Float64Var(&c.instGUnc, "instrument-fwhm-unc-nm", 0, "1σ of the instrument's Gaussian FWHM, nm (enters the systematic σ of n_e)")
	fs.Float64Var(&c.electronT, "electron-temperature-K", 0, fmt.Sprintf("electron temperature of the Stark tables, K (default %g)", diag.DefaultElectronTemperatureK))
	fs.StringVar(&c.opt.LineShape, "line-shape", "stark", "line shape of the spectrum fits: stark (Voigt fits corrected for the Stark shape of Balmer lines) or voigt (as fitted, for Voigt-shaped synthetic spectra)")
	fs.StringVar(&c.opt.Model, "model", "", "analysis route of spectra: whole (one physical model fitted over the whole range: areas tied by T_exc, every Stark width by one n_e) or lines (each line's window on its own, then the Boltzmann plot and the widths); default: "+server.DefaultModel+". Measurement sets are always analysed line by line")
	fs.StringVar(&c.opt.WholeAreas, "areas", "", "whole route only: boltzmann (line areas tied by T_exc, the default) or free (each line its own area; T_exc from a Boltzmann plot of them)")
	fs.BoolVar(&c.opt.WholeFreeGasTemperature, "free-gas-temperature", false, "whole route only: fit the gas temperature (the Doppler width) instead of taking it as given")
	fs.BoolVar(&c.opt.WholeFreeInstrument, "free-instrument", false, "whole route only: fit the instrument's Gaussian width and its slope with wavelength instead of taking them as given")
	fs.Float64Var(&c.responseUnc, "response-unc-rel", 0, "relative 1σ of the response calibration between the extreme lines (e.g. 0.05)")
	fs.BoolVar(&c.solveGas, "solve-gas-temperature", false, "solve n_e and gas temperature together from Hα and Hβ")
	fs.Float64Var(&c.pressure, "pressure-Pa", 0, "pressure of the perturber gas, Pa")
	fs.StringVar(&c.perturber, "perturber", "none", "van der Waals perturber: Ar, He, Ne, Kr, Xe, N2, H2, air or none")
	fs.Float64Var(&c.groundDensity, "ground-state-density-m3", 0, "H(1s) density for resonance broadening, m⁻³")
	fs.StringVar(&c.unit, "intensity-unit", "", "unit of the response-corrected intensities: photon or energy (default: the calibration's)")
	fs.StringVar(&c.darkFile, "dark", "", "dark/background spectrum on the same wavelength grid")
	fs.StringVar(&c.responseFile, "response", "", "relative response curve: wavelength (nm) and counts per unit intensity")
	fs.StringVar(&c.lampFile, "lamp", "", "standard-lamp spectrum for a response calibration (with --lamp-irradiance or --grey-body-K)")
	fs.StringVar(&c.irradianceFile, "lamp-irradiance", "", "the lamp's certified spectral irradiance table (nm, W m⁻² nm⁻¹)")
	fs.Float64Var(&c.greyBodyK, "grey-body-K", 0, "treat the lamp as a grey body at this temperature (approximate; flagged)")
	fs.Float64Var(&c.saturation, "saturation-counts", 0, "detector ceiling in raw counts (default: detect a clipped top)")
	fs.Float64Var(&c.gain, "gain-e-per-count", 0, "detector gain for the Poisson noise model, electrons per count")
	fs.Float64Var(&c.readNE, "read-noise-e", 0, "detector read noise, electrons rms")
	fs.BoolVar(&c.correctOffset, "correct-offset", false, "shift the axis by the mean offset of the fitted line centres and refit")
	fs.Float64Var(&c.minSNR, "min-snr", 0, fmt.Sprintf("detection threshold on peak SNR (default %v)", spectrum.DefaultMinSNR))
	fs.IntVar(&c.maxUpper, "max-upper", 0, fmt.Sprintf("highest Balmer member searched (default %d)", spectrum.DefaultMaxUpper))
	fs.BoolVar(&c.windows, "windows", false, "include each fitted window's data, model and residuals")
	fs.StringVar(&c.calibrated, "calibrated", "", "the spectra are already response-corrected (calibrated irradiance or radiance, per nm), in photon or energy units")
	fs.BoolVar(&c.text, "text", false, "print a short summary for people instead of JSON: the route, T_exc, n_e and T_g with their σ, the warnings, and the whole-spectrum fit's parameters, χ² and distance from the line-by-line route")
	fs.StringVar(&c.progress, "progress", "auto", "progress line on standard error for several files: auto (when it is a terminal), always or never")
	return fs, c
}

// AnalyzeCommand runs "glowlog analyze" and returns the exit status.
func AnalyzeCommand(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	fs, c := analyzeFlags(stderr)
	if err := ParseInterleaved(fs, args); err != nil {
		return flagExit(err)
	}
	c.set = map[string]bool{}
	fs.Visit(func(f *flag.Flag) { c.set[f.Name] = true })
	files := fs.Args()
	if len(files) == 0 {
		fmt.Fprintln(stderr, "glowlog analyze: give one or more files (measurement sets or spectra), or - for standard input")
		return ExitInput
	}
	if err := c.load(); err != nil {
		fmt.Fprintf(stderr, "glowlog analyze: %v\n", err)
		return ExitInput
	}
	prog, err := newProgress(stderr, c.progress, len(files))
	if err != nil {
		fmt.Fprintf(stderr, "glowlog analyze: %v\n", err)
		return ExitInput
	}
	var stdinData []byte
	for _, f := range files {
		if f == "-" {
			if stdinData != nil {
				fmt.Fprintln(stderr, "glowlog analyze: standard input (-) may be given only once")
				return ExitInput
			}
			b, err := io.ReadAll(io.LimitReader(stdin, specfile.DefaultMaxBytes+1))
			if err != nil {
				fmt.Fprintf(stderr, "glowlog analyze: stdin: %v\n", err)
				return ExitInput
			}
			stdinData = b
		}
	}

	// The collector keeps its setting (GOGC, default 100): records are
	// written as soon as they are in order, so the live data stay small
	// (workspaces, a few results) and the heap stays near the runtime's
	// 4 MB minimum. A larger GOGC (400 was tried) lets each file's
	// garbage land on fresh pages, and their page faults cost more than
	// the collections saved (300 files, one core: 0.48–0.54 ms CPU per file
	// at GOGC=100, 0.55–0.65 at 400; 40 and 70 were slower too).
	// Workers analyse files in turn; this goroutine writes each record as
	// soon as every earlier one is written and lets the result go.
	type slot struct {
		res  any
		err  error
		done chan struct{}
	}
	slots := make([]slot, len(files))
	for i := range slots {
		slots[i].done = make(chan struct{})
	}
	jobs := make(chan int)
	stop := make(chan struct{})
	go func() {
		defer close(jobs)
		for i := range files {
			select {
			case jobs <- i:
			case <-stop:
				return
			}
		}
	}()
	var wg sync.WaitGroup
	workers := min(runtime.GOMAXPROCS(0), len(files))
	for range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := newAnalyzeWorker()
			for i := range jobs {
				slots[i].res, slots[i].err = c.analyzeOne(w, files[i], stdinData)
				prog.done()
				close(slots[i].done)
			}
		}()
	}
	// Messages for standard error wait until the progress line is done,
	// as they did when every file was analysed before the first record.
	var msgs bytes.Buffer
	var waitOnce sync.Once
	wait := func() { waitOnce.Do(func() { wg.Wait(); prog.finish() }) }
	defer func() {
		close(stop)
		wait()
		if msgs.Len() > 0 {
			stderr.Write(msgs.Bytes())
		}
	}()
	if prog != nil {
		// A progress line (on a terminal, where the records may go too):
		// the records follow it as one block rather than interleave with
		// its updates.
		wait()
	}

	// Every file gets exactly one record, in the order given: its result,
	// or an error record in its place. Exit status: 0 when every file was
	// analysed, 2 when any file was bad input (its record says why), 1 on
	// an internal failure (writing the output, or a result that could not
	// be encoded, which also gets an error record; 1 wins over 2).
	status := ExitOK
	single := len(files) == 1
	var out bytes.Buffer // one encoding buffer, reused record after record
	for i := range slots {
		<-slots[i].done
		r, err := slots[i].res, slots[i].err
		slots[i].res = nil // written below: the result can go
		src := sourceName(files[i])
		if c.text {
			out.Reset()
			if err != nil {
				fmt.Fprintf(&msgs, "glowlog analyze: %v\n", err)
				if status == ExitOK {
					status = ExitInput
				}
				if single {
					return status
				}
				fmt.Fprintf(&out, "%s\n  not analysed: %v\n\n", src, err)
			} else {
				writeTextSummary(&out, src, r)
			}
			if _, err := stdout.Write(out.Bytes()); err != nil {
				fmt.Fprintf(&msgs, "glowlog analyze: writing output: %v\n", err)
				return ExitError
			}
			continue
		}
		var buf []byte
		var encErr error
		if err == nil {
			buf, encErr = encodeRecord(&out, r, single)
			// Final net: a NaN or ±Inf, which encoding/json refuses, is
			// named by its path as a problem of the input. (Checked only
			// when the encoder fails: a result it writes has none.)
			if encErr != nil {
				if ferr := diag.CheckFinite(r); ferr != nil {
					err, encErr = fmt.Errorf("%s: %s", src, strings.TrimPrefix(ferr.Error(), "diag: ")), nil
				}
			}
		}
		if encErr != nil {
			fmt.Fprintf(&msgs, "glowlog analyze: %s: encoding result: %v\n", src, encErr)
			status = ExitError
			if single {
				return status
			}
			buf, _ = encodeRecord(&out, errorRecord{Source: src, Error: "internal error: the result could not be encoded: " + encErr.Error()}, false)
		} else if err != nil {
			fmt.Fprintf(&msgs, "glowlog analyze: %v\n", err)
			if status == ExitOK {
				status = ExitInput // an internal failure (1) stays 1
			}
			if single {
				return status
			}
			buf, _ = encodeRecord(&out, errorRecord{Source: src, Error: err.Error()}, false)
		}
		if _, err := stdout.Write(buf); err != nil {
			fmt.Fprintf(&msgs, "glowlog analyze: writing output: %v\n", err)
			return ExitError
		}
	}
	return status
}

// analyzeWorker is one worker's workspace, reused file after file: the
// pipeline, the file's bytes and the parsed spectrum's arrays.
type analyzeWorker struct {
	p    *spectrum.Pipeline
	data []byte
	pts  specfile.Buffers
}

func newAnalyzeWorker() *analyzeWorker {
	return &analyzeWorker{p: spectrum.NewPipeline(8192)}
}

// encodeRecord writes one JSON record (indented for a single file) into
// buf, which it resets first, and returns buf's bytes, valid until the
// next use of buf.
func encodeRecord(buf *bytes.Buffer, v any, indent bool) ([]byte, error) {
	buf.Reset()
	if r, ok := v.(spectrum.Result); ok {
		// The spectrum result's own encoder writes encoding/json's bytes
		// without reflection; a value it refuses (NaN, ±Inf) goes the
		// encoding/json way below, for its error.
		if b, err := spectrum.AppendJSON(buf.AvailableBuffer(), &r); err == nil {
			if !indent {
				buf.Write(b)
				buf.WriteByte('\n')
				return buf.Bytes(), nil
			}
			var ib bytes.Buffer
			if err := json.Indent(&ib, b, "", "  "); err == nil {
				buf.Reset()
				buf.Write(ib.Bytes())
				buf.WriteByte('\n')
				return buf.Bytes(), nil
			}
			buf.Reset()
		}
	}
	enc := json.NewEncoder(buf)
	enc.SetEscapeHTML(false)
	if indent {
		enc.SetIndent("", "  ")
	}
	if err := enc.Encode(v); err != nil {
		return nil, err
	}
	return buf.Bytes(), nil
}

// errorRecord stands in a JSON Lines batch for a file that failed.
type errorRecord struct {
	Source string `json:"source"`
	Error  string `json:"error"`
}

func sourceName(f string) string {
	if f == "-" {
		return "stdin"
	}
	return f
}

// analyzeOne reads and analyses one file in w's workspace. Nothing of
// the result refers to the workspace.
func (c *analyzeConfig) analyzeOne(w *analyzeWorker, name string, stdinData []byte) (any, error) {
	src := sourceName(name)
	var data []byte
	if name == "-" {
		data = stdinData
	} else {
		b, err := readLimitedInto(w.data, name, specfile.DefaultMaxBytes)
		if err != nil {
			return nil, err
		}
		w.data, data = b, b
	}
	if c.isMeasurementSet(data) {
		if c.opt.Model == spectrum.ModelWhole {
			return nil, fmt.Errorf("%s: --model whole needs a spectrum: a measurement set (line table) is always analysed line by line", src)
		}
		for _, f := range conditionFlags {
			if c.set[f] {
				return nil, fmt.Errorf("%s: --%s applies to spectrum files; a measurement set carries its own conditions", src, f)
			}
		}
		if len(data) > mset.MaxBytes {
			return nil, &mset.Error{Source: src, Msg: fmt.Sprintf("file is %d bytes, more than the %d-byte limit for a measurement set", len(data), mset.MaxBytes)}
		}
		data = bytes.Clone(data) // off the reused buffer: small, and decoded once
		m, err := mset.Decode(src, data)
		if err != nil {
			return nil, err
		}
		res, err := diag.Analyze(m)
		if err != nil {
			return nil, fmt.Errorf("%s%s: %s", src, lineSuffix(data, err), strings.TrimPrefix(err.Error(), "diag: "))
		}
		return res, nil
	}
	sp, err := c.readCurveInto(src, data, 0, &w.pts)
	if err != nil {
		return nil, err
	}
	res, err := w.p.Analyze(sp, c.opt)
	if err != nil {
		return nil, err
	}
	return res, nil
}

// lineSuffix places an analysis error of a measurement set in the file:
// ":N" for the line of the input field at fault (a line's field, or the
// line's object when the fault is in a computed value), "" if unknown.
func lineSuffix(data []byte, err error) string {
	var path string
	var le *diag.LineError
	var ne *diag.NumericError
	hasNE := errors.As(err, &ne)
	switch {
	case errors.As(err, &le) && le.Index >= 0:
		path = fmt.Sprintf("lines[%d]", le.Index)
		if hasNE && !strings.ContainsAny(ne.Field, ".[") {
			if n := mset.LineOf(data, path+"."+ne.Field); n > 0 {
				return fmt.Sprintf(":%d", n)
			}
		}
	case hasNE && !strings.ContainsAny(ne.Field, ".["):
		path = ne.Field
	default:
		return ""
	}
	if n := mset.LineOf(data, path); n > 0 {
		return fmt.Sprintf(":%d", n)
	}
	return ""
}

func (c *analyzeConfig) isMeasurementSet(data []byte) bool {
	switch c.format {
	case "measurement":
		return true
	case "text", "jcamp":
		return false
	}
	t := bytes.TrimLeft(data, " \t\r\n\ufeff")
	return len(t) > 0 && t[0] == '{'
}

func readLimited(name string, limit int64) ([]byte, error) {
	return readLimitedInto(nil, name, limit)
}

// readLimitedInto is readLimited reading into buf's memory, grown to the
// file's size if it is smaller, so that a batch reads file after file
// without allocating. On Linux it is readLimitedSys (readfile_linux.go),
// elsewhere readLimitedFile.

// readLimitedFile is readLimitedInto through os.File.
func readLimitedFile(buf []byte, name string, limit int64) ([]byte, error) {
	f, err := os.Open(name)
	if err != nil {
		return nil, err
	}
	defer f.Close()
	size := int64(512)
	if st, err := f.Stat(); err == nil && st.Mode().IsRegular() {
		size = min(st.Size(), limit) + 1 // + 1: room to see EOF without growing
	}
	b := buf[:0]
	if int64(cap(b)) < size {
		b = make([]byte, 0, size)
	}
	r := io.LimitReader(f, limit+1)
	for {
		if len(b) == cap(b) {
			b = append(b, 0)[:len(b)]
		}
		n, err := r.Read(b[len(b):cap(b)])
		b = b[:len(b)+n]
		if err == io.EOF {
			break
		}
		if err != nil {
			return nil, fmt.Errorf("%s: %v", name, err)
		}
	}
	if int64(len(b)) > limit {
		return nil, fmt.Errorf("%s: file exceeds the %d-byte limit", name, limit)
	}
	return b, nil
}

// readSpectrum parses a spectrum file into the pipeline's form.
func (c *analyzeConfig) readSpectrum(src string, data []byte) (*spectrum.Spectrum, error) {
	return c.readCurve(src, data, 0)
}

// readCurve parses a spectrum or a tabulated curve (a response curve may
// have only a few points: minPoints, 0 for the reader's default).
func (c *analyzeConfig) readCurve(src string, data []byte, minPoints int) (*spectrum.Spectrum, error) {
	return c.readCurveInto(src, data, minPoints, nil)
}

// readCurveInto is readCurve reading the points into pts's arrays (see
// specfile.ReadBytes; nil: new arrays): the spectrum's arrays are valid
// until pts is used again.
func (c *analyzeConfig) readCurveInto(src string, data []byte, minPoints int, pts *specfile.Buffers) (*spectrum.Spectrum, error) {
	return server.ReadCurve(src, data, server.CurveOptions{Format: c.format, XUnit: c.xUnit, Vacuum: c.vacuum, MinPoints: minPoints}, pts)
}

// load checks the flags and reads the files shared by every spectrum.
func (c *analyzeConfig) load() error {
	iso, err := diag.ParseIsotope(c.isotope)
	if err != nil {
		return fmt.Errorf("--isotope: %v", strings.TrimPrefix(err.Error(), "diag: "))
	}
	if _, err := diag.LookupPerturber(c.perturber); err != nil {
		return fmt.Errorf("--perturber: %v", strings.TrimPrefix(err.Error(), "diag: "))
	}
	for _, v := range []struct {
		name string
		v    float64
	}{{"instrument-fwhm-nm", c.instG}, {"instrument-lorentz-fwhm-nm", c.instL}, {"gas-temperature-K", c.gasT},
		{"gas-temperature-unc-K", c.gasTUnc}, {"pressure-Pa", c.pressure}, {"ground-state-density-m3", c.groundDensity},
		{"grey-body-K", c.greyBodyK}, {"saturation-counts", c.saturation}, {"gain-e-per-count", c.gain},
		{"read-noise-e", c.readNE}, {"min-snr", c.minSNR}, {"instrument-fwhm-unc-nm", c.instGUnc},
		{"electron-temperature-K", c.electronT}, {"response-unc-rel", c.responseUnc}} {
		if !(v.v >= 0) || v.v > 1e300 {
			return fmt.Errorf("--%s must be a finite number ≥ 0, got %v", v.name, v.v)
		}
	}
	if c.gasT > 0 && c.gasT < diag.MinGasTemperatureK {
		return fmt.Errorf("--gas-temperature-K must be 0 (unknown) or at least %v K, got %v: check the unit", diag.MinGasTemperatureK, c.gasT)
	}
	if c.electronT != 0 && (c.electronT < 1000 || c.electronT > 2e6) {
		return fmt.Errorf("--electron-temperature-K must be 0 (default %g K) or 1000–2e6 K, got %v: check the unit", diag.DefaultElectronTemperatureK, c.electronT)
	}
	if c.responseUnc > 1 {
		return fmt.Errorf("--response-unc-rel is a fraction ≤ 1 (0.05 for 5 %%), got %v", c.responseUnc)
	}
	if c.instGUnc > 50 {
		return fmt.Errorf("--instrument-fwhm-unc-nm above 50 nm: check the unit (nm expected)")
	}
	if c.instG > 50 || c.instL > 50 {
		return fmt.Errorf("--instrument-fwhm-nm above 50 nm: check the unit (nm expected)")
	}
	if !spectrum.ValidLineShape(c.opt.LineShape) {
		return fmt.Errorf("--line-shape must be %s or %s, got %q", spectrum.LineShapeStark, spectrum.LineShapeVoigt, c.opt.LineShape)
	}
	if err := checkRouteFlags(c.opt); err != nil {
		return err
	}
	if c.maxUpper != 0 && (c.maxUpper < 3 || c.maxUpper > diag.MaxLevel) {
		return fmt.Errorf("--max-upper must be 3…%d, got %d", diag.MaxLevel, c.maxUpper)
	}
	o := &c.opt
	o.Conditions = diag.Measurement{Isotope: iso, InstrumentGaussFWHMNM: c.instG, InstrumentLorentzFWHMNM: c.instL,
		GasTemperatureK: c.gasT, GasTemperatureUncK: c.gasTUnc, PressurePa: c.pressure, Perturber: c.perturber,
		GroundStateDensityM3: c.groundDensity, SolveGasTemperature: c.solveGas,
		InstrumentFWHMUncNM: c.instGUnc, ElectronTemperatureK: c.electronT, ResponseUncRel: c.responseUnc}
	o.SaturationCounts, o.GainElectronsPerCount, o.ReadNoiseElectrons = c.saturation, c.gain, c.readNE
	o.CorrectOffset, o.MinSNR, o.MaxUpper, o.KeepWindows = c.correctOffset, c.minSNR, c.maxUpper, c.windows
	if c.instrumentFile != "" {
		b, err := readLimited(c.instrumentFile, 1<<20)
		if err != nil {
			return err
		}
		in, err := calib.ReadInstrument(bytes.NewReader(b))
		if err != nil {
			return fmt.Errorf("%s: %v", c.instrumentFile, err)
		}
		o.Instrument = in
	}
	if c.darkFile != "" {
		b, err := readLimited(c.darkFile, specfile.DefaultMaxBytes)
		if err != nil {
			return err
		}
		d, err := c.readSpectrum(c.darkFile, b)
		if err != nil {
			return err
		}
		o.Dark = d
	}
	unit := diag.PhotonUnits
	if c.unit != "" {
		u, err := diag.ParseIntensityUnit(c.unit)
		if err != nil {
			return fmt.Errorf("--intensity-unit: %v", err)
		}
		unit = u
	}
	if c.set["intensity-unit"] && c.responseFile == "" && c.lampFile == "" {
		return fmt.Errorf("--intensity-unit describes a response calibration: give --response or --lamp too")
	}
	if c.calibrated != "" {
		u, err := diag.ParseIntensityUnit(c.calibrated)
		if err != nil {
			return fmt.Errorf("--calibrated: %v", err)
		}
		if c.responseFile != "" || c.lampFile != "" || c.set["intensity-unit"] {
			return fmt.Errorf("--calibrated says the spectra are already response-corrected: give no --response, --lamp or --intensity-unit with it")
		}
		if c.gain > 0 {
			return fmt.Errorf("--calibrated spectra are not detector counts: --gain-e-per-count does not apply")
		}
		o.Calibrated, o.CalibratedUnit = true, u
	}
	switch {
	case c.responseFile != "" && c.lampFile != "":
		return fmt.Errorf("give either --response or --lamp, not both")
	case c.responseFile != "":
		b, err := readLimited(c.responseFile, specfile.DefaultMaxBytes)
		if err != nil {
			return err
		}
		s, err := c.readCurve(c.responseFile, b, 2)
		if err != nil {
			return err
		}
		r, err := calib.FromCurve(c.responseFile, s.WavelengthNM, s.Counts, unit)
		if err != nil {
			return err
		}
		o.Response, o.ResponseUnit = r, unit
	case c.lampFile != "":
		b, err := readLimited(c.lampFile, specfile.DefaultMaxBytes)
		if err != nil {
			return err
		}
		s, err := c.readSpectrum(c.lampFile, b)
		if err != nil {
			return err
		}
		perNM := make([]float64, len(s.Counts))
		for i := range perNM {
			perNM[i] = s.Counts[i] / spectrum.PixelWidth(s.WavelengthNM, i)
		}
		var r *calib.Response
		switch {
		case c.irradianceFile != "" && c.greyBodyK > 0:
			return fmt.Errorf("give either --lamp-irradiance or --grey-body-K, not both")
		case c.irradianceFile != "":
			ib, err := readLimited(c.irradianceFile, 1<<24)
			if err != nil {
				return err
			}
			irr, err := calib.ReadIrradiance(c.irradianceFile, bytes.NewReader(ib))
			if err != nil {
				return err
			}
			r, err = calib.FromStandardLamp(s.WavelengthNM, perNM, irr.WavelengthNM, irr.WPerM2NM, unit)
			if err != nil {
				return err
			}
		case c.greyBodyK > 0:
			r, err = calib.FromGreyBody(s.WavelengthNM, perNM, c.greyBodyK, unit)
			if err != nil {
				return err
			}
		default:
			return fmt.Errorf("--lamp needs --lamp-irradiance (certified table) or --grey-body-K")
		}
		o.Response, o.ResponseUnit = r, unit
	case c.irradianceFile != "" || c.greyBodyK > 0:
		return fmt.Errorf("--lamp-irradiance and --grey-body-K need --lamp")
	}
	return nil
}

// checkRouteFlags checks --model and the whole-fit flags.
func checkRouteFlags(o spectrum.Options) error {
	if !spectrum.ValidModel(o.Model) {
		return fmt.Errorf("--model must be %s or %s, got %q", spectrum.ModelWhole, spectrum.ModelLines, o.Model)
	}
	if o.WholeAreas != "" && o.WholeAreas != spectrum.WholeAreasBoltzmann && o.WholeAreas != spectrum.WholeAreasFree {
		return fmt.Errorf("--areas must be %s or %s, got %q", spectrum.WholeAreasBoltzmann, spectrum.WholeAreasFree, o.WholeAreas)
	}
	var given []string
	if o.WholeAreas != "" {
		given = append(given, "--areas")
	}
	if o.WholeFreeGasTemperature {
		given = append(given, "--free-gas-temperature")
	}
	if o.WholeFreeInstrument {
		given = append(given, "--free-instrument")
	}
	st := server.AnalysisSettings{Model: o.Model}
	if len(given) > 0 && st.EffectiveModel() != spectrum.ModelWhole {
		return fmt.Errorf("%s: only the whole-spectrum fit uses it; give --model whole (the route is %s)", strings.Join(given, ", "), st.EffectiveModel())
	}
	return nil
}
