package server

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"sort"
	"strconv"
	"strings"
	"time"

	"glowlog/diag"
	"glowlog/diag/grating"
	"glowlog/diag/spectrum"
	"glowlog/store"
)

// DemoOptions sizes the demo scenario.
type DemoOptions struct {
	// Runs is the number of runs (0: 300).
	Runs int
	// Seed makes the scenario reproducible (0: a fixed default).
	Seed uint64
	// End is the last day of the scenario (zero, or later than the
	// store's clock: today, UTC); the runs span the 182 days before it.
	End time.Time
}

// demoDays is the length of the scenario and demoMaintenanceDay the day on
// which the Jet line J1 electrode is replaced.
const (
	demoDays           = 182
	demoMaintenanceDay = 120
)

// demoChamber is one invented chamber of the Fenwick Hollow Plasma Lab
// with the typical conditions of its source.
type demoChamber struct {
	name, recipe, recipeDesc, source, gas, flows, perturber string
	pressurePa                                              float64
	powerW                                                  [2]float64
	gapMM                                                   float64
	// setting is the spectrometer setting the chamber's runs use and
	// slitsUM the entrance slit widths its operators choose from.
	setting    *demoSetting
	slitsUM    []float64
	gasT, texc float64
	ne         func(day, power float64) float64
	uppers     []int
	weight     float64
}

// demoSurveyUppers are the Balmer members on the survey spectrograph's
// 378–702 nm axis (Hα … H10; H11 is at 377.1 nm): a discharge emits them
// all, and the whole-spectrum fit models every member in range, so the
// survey chambers' spectra carry them all (the weak high members with
// their Boltzmann areas).
var demoSurveyUppers = []int{3, 4, 5, 6, 7, 8, 9, 10}

var demoChambers = []demoChamber{
	{name: "Jet line J1", recipe: "J1 argon/hydrogen jet", recipeDesc: "Ar + 1 % H2, 2 slm, pin electrode",
		source: "plasma_jet", gas: "Ar + 1 % H2", flows: "Ar 2.0 slm, H2 20 sccm", perturber: "Ar",
		pressurePa: 101325, powerW: [2]float64{25, 35}, gapMM: 1.0, setting: &demoSurvey, slitsUM: []float64{35, 40},
		gasT: 1500, texc: 6500, uppers: demoSurveyUppers, weight: 0.4,
		// The pin electrode erodes: n_e falls by 40 % over 120 days and
		// comes back when the electrode is replaced.
		ne: func(day, power float64) float64 {
			age := day
			if day >= demoMaintenanceDay {
				age = day - demoMaintenanceDay
			}
			return 9e21 * (1 - 0.4*age/demoMaintenanceDay) * math.Pow(power/30, 0.5)
		}},
	{name: "Torch line T1", recipe: "T1 microwave torch", recipeDesc: "2.45 GHz surface-wave torch, Ar + 3 % H2",
		source: "microwave", gas: "Ar + 3 % H2", flows: "Ar 5 slm, H2 150 sccm", perturber: "Ar",
		pressurePa: 101325, powerW: [2]float64{800, 1500}, setting: &demoSurvey, slitsUM: []float64{35, 40, 50},
		gasT: 2500, texc: 7500, uppers: demoSurveyUppers, weight: 0.25,
		ne: func(_, power float64) float64 { return 3e21 * math.Pow(power/1000, 0.6) }},
	{name: "Glow tube G3", recipe: "G3 hydrogen glow", recipeDesc: "DC glow, H2 + 10 % Ar, hollow cathode",
		source: "dc_glow", gas: "H2 + 10 % Ar", flows: "H2 45 sccm, Ar 5 sccm", perturber: "H2",
		pressurePa: 600, powerW: [2]float64{40, 90}, gapMM: 30, setting: &demoHbeta, slitsUM: []float64{40, 50},
		gasT: 500, texc: 4000, uppers: []int{3, 4, 5, 6, 7, 8}, weight: 0.2,
		ne: func(_, power float64) float64 { return 1.5e20 * power / 60 }},
	{name: "DBD cell D1", recipe: "D1 helium barrier", recipeDesc: "Helium dielectric barrier, 20 kHz, 1 mm gap",
		source: "dielectric_barrier", gas: "He + 0.5 % H2", flows: "He 3 slm, H2 15 sccm", perturber: "He",
		pressurePa: 101325, powerW: [2]float64{10, 25}, gapMM: 1.0, setting: &demoHalpha, slitsUM: []float64{40, 50},
		gasT: 400, texc: 4500, uppers: []int{3, 4, 5}, weight: 0.15,
		ne: func(_, power float64) float64 { return 1.5e21 * math.Pow(power/15, 0.4) }},
}

// demoSetting is one spectrometer of the lab with a grating in place and
// the wavelength on the detector centre. The spectrometers and their
// figures are invented; the wavelength axis, dispersion and instrument
// width of every demo spectrum follow from them through diag/grating (the
// spectrometer planner's physics), in a Littrow mount.
type demoSetting struct {
	// name is the instrument as a run's notes mention it.
	name string
	// spec is the spectrometer without its slit (set per run).
	spec grating.Spectrometer
	// centreNM is the wavelength on the detector centre (air, nm).
	centreNM float64
	// response is the name of the relative-response file attached to
	// each run measured with this instrument.
	response string
}

// The lab's two spectrometers (invented):
//   - FH-S1, a 0.57 m survey spectrograph with a 300 l/mm grating and a
//     4096 × 13.5 µm line detector: 378–702 nm, 0.079 nm per pixel, all
//     Balmer lines from Hα to H8 in one exposure (T_exc and n_e);
//   - FH-H2, a 0.75 m high-resolution spectrometer with a turret of
//     1800 and 2400 l/mm gratings and a 2048 × 13.5 µm detector: 18 nm
//     around Hβ (0.009 nm per pixel) or 9.5 nm around Hα (0.0046 nm per
//     pixel) — one line on the detector, so n_e but no Boltzmann plot. The
//     low-density glow tube G3 and the barrier cell D1 need it: their
//     Stark widths (a few hundredths of a nm) vanish under the survey
//     instrument's 0.2 nm.
//
// Illuminated widths are the grating widths of such instruments (from
// memory); they only set the theoretical resolution, far below the slit
// limit here.
var (
	demoSurvey = demoSetting{name: "FH-S1 survey spectrograph (f = 570 mm, 300 l/mm, 4096 × 13.5 µm)",
		spec:     grating.Spectrometer{GroovesPerMM: 300, Order: 1, FocalLengthMM: 570, PixelSizeUM: 13.5, Pixels: 4096, IlluminatedWidthMM: 50},
		centreNM: 540, response: "fh-s1-relative-response.csv"}
	demoHbeta = demoSetting{name: "FH-H2 high-resolution spectrometer (f = 750 mm, 1800 l/mm, 2048 × 13.5 µm, centred on Hβ)",
		spec:     grating.Spectrometer{GroovesPerMM: 1800, Order: 1, FocalLengthMM: 750, PixelSizeUM: 13.5, Pixels: 2048, IlluminatedWidthMM: 60},
		centreNM: 486.13, response: "fh-h2-1800-relative-response.csv"}
	demoHalpha = demoSetting{name: "FH-H2 high-resolution spectrometer (f = 750 mm, 2400 l/mm, 2048 × 13.5 µm, centred on Hα)",
		spec:     grating.Spectrometer{GroovesPerMM: 2400, Order: 1, FocalLengthMM: 750, PixelSizeUM: 13.5, Pixels: 2048, IlluminatedWidthMM: 60},
		centreNM: 656.28, response: "fh-h2-2400-relative-response.csv"}
)

// demoAxis returns the pixel-centre wavelengths of a setting, and
// demoInstrument the instrument FWHM (nm, the planner's estimate: the
// largest of the slit image, one pixel and the theoretical limit, at the
// detector centre) and its width in pixels with the given slit.
func demoAxis(st *demoSetting) ([]float64, error) {
	alpha, err := grating.LittrowAngleDeg(st.centreNM, st.spec.GroovesPerMM, st.spec.Order)
	if err != nil {
		return nil, err
	}
	sp := st.spec
	sp.SlitWidthUM = 1 // not used by the axis
	return sp.PixelWavelengths(st.centreNM, alpha)
}

func demoInstrument(st *demoSetting, slitUM float64) (fwhmNM, pixels float64, err error) {
	sp := st.spec
	sp.SlitWidthUM = slitUM
	p, err := sp.Littrow(st.centreNM)
	if err != nil {
		return 0, 0, err
	}
	return p.PracticalNM, p.FWHMPixels(), nil
}

var demoOperators = []struct {
	name string
	role store.Role
}{
	{"ilse.varga", store.RoleOperator}, {"tomas.quill", store.RoleOperator}, {"nadia.brenn", store.RoleOperator},
	{"oren.falk", store.RoleOperator}, {"maud.lind", store.RoleReviewer}, {"piet.harrowgate", store.RoleReviewer},
}

// demoEvents are the invented chamber events of the scenario (day of the
// scenario, time of day UTC, chamber index, kind, note, staff index). They
// are in time order. The J1 ones frame its saw-tooth: a new pin on day 0,
// n_e about a third down by day 96 (the model gives 1 − 0.4·96/120 = 0.68),
// the pin replaced on the maintenance day before the first run.
var demoEvents = []struct {
	day     int
	at      time.Duration
	chamber int
	kind    string
	note    string
	by      int
}{
	{0, 7*time.Hour + 10*time.Minute, 0, store.EventElectrodeChange, "New tungsten pin electrode fitted; gap set to 1.0 mm.", 0},
	{28, 7*time.Hour + 40*time.Minute, 3, store.EventMaintenance, "Barrier plates cleaned and re-seated; gap checked at 1.0 mm.", 3},
	{61, 7*time.Hour + 15*time.Minute, 1, store.EventGasBottleChange, "H2 cylinder changed (same grade); lines purged before the first run.", 1},
	{96, 16*time.Hour + 30*time.Minute, 0, store.EventOther, "n_e on J1 down by about a third since the new pin; gap now 1.4 mm. Pin erosion suspected, spare electrode ordered.", 2},
	{demoMaintenanceDay, 7*time.Hour + 30*time.Minute, 0, store.EventElectrodeChange, "Pin electrode replaced (tip eroded, gap had grown to 1.5 mm); gap reset to 1.0 mm.", 0},
	{141, 7*time.Hour + 50*time.Minute, 2, store.EventMaintenance, "Hollow cathode cleaned; viewport window replaced.", 3},
}

var demoReturnNotes = []string{
	"The strongest line looks clipped in the second spectrum; please check the integration time and add a dark frame.",
	"Gas temperature was taken from last week's run; measure it for this run or justify it in the notes.",
	"Please confirm the slit width: the notes and the setting disagree.",
	"Fit residuals of the broadened line show structure; try a narrower window or check the wavelength offset.",
}

// SeedDemo fills an empty database with the demo scenario: the invented
// Fenwick Hollow Plasma Lab, four chambers, six staff (four operators, two
// reviewers), opt.Runs runs over six months with synthetic spectra
// (spectrum.SynthesizeStark: SH99 Stark shapes) on the wavelength axis of the run's spectrometer
// (demoSetting), analysed by ReanalyzeRunTx, a slow electrode-wear drift
// of n_e in Jet line J1 with a maintenance step on day 120, chamber events
// that explain it, and runs in every review state.
//
// Rows are written in a few transactions; the store's clock follows the
// scenario so that creation and review times are plausible, and no time
// is later than the seeding clock (s.DB.Now when SeedDemo is called) or
// opt.End if that is earlier. The admin (adminID, which must exist) is
// never an actor of the scenario: runs are by the operators, submissions
// by their operators, returns and sign-offs by the demo reviewers. It
// prints nothing.
func SeedDemo(ctx context.Context, s *Server, adminID int64, opt DemoOptions) error {
	ctx = store.WithActor(ctx, store.Actor{Via: store.ViaDemo})
	if opt.Runs <= 0 {
		opt.Runs = 300
	}
	if opt.Seed == 0 {
		opt.Seed = 20260301
	}
	if _, err := s.DB.UserByID(ctx, adminID); err != nil {
		return err
	}
	realNow := s.DB.Now
	// limit is the latest time the scenario may write: the seeding clock,
	// or opt.End when that is earlier (an End in the future is moved back
	// to now).
	limit := realNow().UTC()
	if !opt.End.IsZero() && opt.End.Before(limit) {
		limit = opt.End.UTC()
	}
	end := limit.Truncate(24 * time.Hour)
	start := end.AddDate(0, 0, -demoDays)
	rng := rand.New(rand.NewPCG(opt.Seed, 0x9e3779b97f4a7c15))

	defer func() { s.DB.Now = realNow }()
	clock := start
	s.DB.Now = func() time.Time { return clock }

	var staff, reviewers []store.User
	for _, o := range demoOperators {
		pw, _ := NewToken()
		hash, err := HashPassword(pw)
		if err != nil {
			return err
		}
		u, err := s.DB.CreateUser(ctx, o.name, o.role, hash)
		if err != nil {
			return err
		}
		if o.role == store.RoleReviewer {
			reviewers = append(reviewers, u)
		} else {
			staff = append(staff, u)
		}
	}
	chamberIDs := make([]int64, len(demoChambers))
	recipeIDs := make([]int64, len(demoChambers))
	for i, ch := range demoChambers {
		var err error
		if chamberIDs[i], err = s.DB.EnsureChamber(ctx, ch.name, "Fenwick Hollow Plasma Lab"); err != nil {
			return err
		}
		if recipeIDs[i], err = s.DB.EnsureRecipe(ctx, ch.recipe, ch.recipeDesc); err != nil {
			return err
		}
	}
	// The wavelength axis of each spectrometer setting.
	axes := map[*demoSetting][]float64{}
	for _, ch := range demoChambers {
		if axes[ch.setting] == nil {
			x, err := demoAxis(ch.setting)
			if err != nil {
				return fmt.Errorf("demo: %s: %w", ch.setting.name, err)
			}
			axes[ch.setting] = x
		}
	}

	// Start times: uniform over the scenario on working hours, sorted.
	times := make([]time.Time, opt.Runs)
	for i := range times {
		day := rng.IntN(demoDays)
		times[i] = start.AddDate(0, 0, day).Add(time.Duration(8*60+rng.IntN(9*60)) * time.Minute)
	}
	sort.Slice(times, func(i, j int) bool { return times[i].Before(times[j]) })
	maintenance := start.AddDate(0, 0, demoMaintenanceDay)

	type seeded struct {
		id       int64
		operator store.User
		started  time.Time
	}
	var runs []seeded
	const batch = 60
	for b := 0; b < opt.Runs; b += batch {
		tx, err := s.DB.Begin(ctx)
		if err != nil {
			return err
		}
		for i := b; i < min(b+batch, opt.Runs); i++ {
			ci := pickChamber(rng)
			ch := demoChambers[ci]
			t := times[i]
			day := t.Sub(start).Hours() / 24
			op := staff[rng.IntN(len(staff))]
			power := ch.powerW[0] + (ch.powerW[1]-ch.powerW[0])*rng.Float64()
			power = math.Round(power)
			slit := ch.slitsUM[rng.IntN(len(ch.slitsUM))]
			instNM, _, err := demoInstrument(ch.setting, slit)
			if err != nil {
				tx.Rollback()
				return err
			}
			// Stored as an operator would enter it: three figures.
			inst, _ := strconv.ParseFloat(strconv.FormatFloat(instNM, 'g', 3, 64), 64)
			gasT := math.Round(ch.gasT*(1+0.05*rng.NormFloat64())/10) * 10
			in := store.RunInput{Title: fmt.Sprintf("%s, %g W", ch.name, power), StartedAt: t,
				ChamberID: &chamberIDs[ci], RecipeID: &recipeIDs[ci], SourceType: ch.source, GasMixture: ch.gas,
				PressurePa: ptr(ch.pressurePa), PowerW: ptr(power), Flows: ch.flows, GratingLMM: ptr(ch.setting.spec.GroovesPerMM),
				SlitUM: ptr(slit), IntegrationMS: ptr(float64(50 * (1 + rng.IntN(10)))), InstrumentFWHMNM: ptr(inst),
				GasTemperatureK: ptr(gasT), Perturber: ch.perturber,
				Notes: "Demo run (invented Fenwick Hollow Plasma Lab); spectra are synthetic. Spectrometer: " + ch.setting.name +
					"; instrument FWHM from the slit width and dispersion."}
			if ch.gapMM > 0 {
				gap := ch.gapMM
				if ci == 0 { // the J1 gap grows as the pin erodes
					age := day
					if day >= demoMaintenanceDay {
						age = day - demoMaintenanceDay
					}
					gap = math.Round((1.0+0.5*age/demoMaintenanceDay)*100) / 100
				}
				in.GapMM = ptr(gap)
			}
			if ci == 0 && !t.Before(maintenance) && t.Before(maintenance.AddDate(0, 0, 7)) {
				in.Tags = append(in.Tags, "maintenance")
				in.Notes += " First week after the maintenance of " + maintenance.Format("2006-01-02") +
					": pin electrode replaced, gap reset to 1.0 mm."
			}
			if rng.Float64() < 0.15 {
				in.Tags = append(in.Tags, "power-scan")
			}
			clock = t.Add(2 * time.Hour)
			id, err := s.DB.CreateRunTx(ctx, tx, op.ID, in)
			if err != nil {
				tx.Rollback()
				return err
			}
			ne := ch.ne(day, power) * (1 + 0.03*rng.NormFloat64())
			texc := ch.texc * (1 + 0.04*rng.NormFloat64())
			pert, _ := diag.LookupPerturber(ch.perturber)
			grid := axes[ch.setting]
			nSpec := 1 + rng.IntN(3)
			var atts []store.Attachment
			for k := 0; k < nSpec; k++ {
				y, err := demoSpectrum(rng, grid, spectrum.SynthConfig{WavelengthNM: grid, Uppers: ch.uppers,
					ExcitationTemperatureK: texc, ElectronDensityM3: ne * (1 + 0.02*rng.NormFloat64()), GasTemperatureK: gasT,
					InstrumentFWHMNM: instNM, Perturber: pert, PressurePa: ch.pressurePa, HalphaArea: 1})
				if err != nil {
					tx.Rollback()
					return err
				}
				name := fmt.Sprintf("%s-%s-%02d.csv", strings.ToLower(strings.Fields(ch.name)[len(strings.Fields(ch.name))-1]), t.Format("20060102-1504"), k+1)
				content := demoCSV(grid, y)
				aid, err := s.DB.AddAttachmentTx(ctx, tx, id, store.KindSpectrum, name, content)
				if err != nil {
					tx.Rollback()
					return err
				}
				atts = append(atts, store.Attachment{ID: aid, RunID: id, Kind: store.KindSpectrum, Name: name, Seq: k + 1, Content: content})
			}
			// The synthetic spectra carry no instrument response, so the
			// true relative response of these invented spectrometers is
			// flat; attaching it records that the intensities are
			// calibrated.
			resp := demoResponse(ch.setting, grid)
			rid, err := s.DB.AddAttachmentTx(ctx, tx, id, store.KindResponse, ch.setting.response, resp)
			if err != nil {
				tx.Rollback()
				return err
			}
			atts = append(atts, store.Attachment{ID: rid, RunID: id, Kind: store.KindResponse, Name: ch.setting.response, Seq: 1, Content: resp})
			st := DefaultSettings(store.Run{InstrumentFWHMNM: in.InstrumentFWHMNM, GasTemperatureK: in.GasTemperatureK,
				PressurePa: in.PressurePa, Perturber: in.Perturber})
			// The demo's lines have the Stark shapes of the SH99 tables
			// (spectrum.SynthesizeStark), as real discharges do: the
			// settings keep the default line shape (stark) and the
			// pipeline's default route (Model empty).
			uid := op.ID
			if _, _, err := s.ReanalyzeRunTx(ctx, tx, id, atts, st, &uid, "first analysis"); err != nil {
				tx.Rollback()
				return err
			}
			runs = append(runs, seeded{id, op, t})
		}
		if err := tx.Commit(); err != nil {
			return err
		}
	}

	// Chamber events that explain the trends (see demoEvents).
	for _, e := range demoEvents {
		at := start.AddDate(0, 0, e.day).Add(e.at)
		clock = at.Add(20 * time.Minute)
		if clock.After(limit) {
			continue
		}
		by := staff[e.by%len(staff)]
		if _, err := s.DB.AddChamberEvent(ctx, by.ID, store.ChamberEventInput{ChamberID: chamberIDs[e.chamber], At: at, Kind: e.kind, Note: e.note}); err != nil {
			return err
		}
	}

	// Review states: older runs are mostly signed off, some returned with
	// a note (and a reply), the newest are drafts or awaiting review. A
	// step that would fall after the limit is not taken: the run stays in
	// its state.
	for _, r := range runs {
		age := end.Sub(r.started).Hours() / 24
		x := rng.Float64()
		clock = r.started.Add(20 * time.Hour)
		var actions []store.ReviewAction
		switch {
		case age > 21 && x < 0.7:
			actions = []store.ReviewAction{store.ActionSubmit, store.ActionSignOff}
		case age > 21 && x < 0.8:
			actions = []store.ReviewAction{store.ActionSubmit, store.ActionReturn}
		case age <= 21 && x < 0.4:
			actions = []store.ReviewAction{store.ActionSubmit}
		case x < 0.9 && age > 21:
			actions = []store.ReviewAction{store.ActionSubmit, store.ActionReturn, store.ActionSubmit, store.ActionSignOff}
		}
		reviewer := reviewers[rng.IntN(len(reviewers))]
		for _, a := range actions {
			if clock.After(limit) {
				break
			}
			by, note := reviewer, ""
			switch a {
			case store.ActionSubmit:
				by = r.operator
			case store.ActionReturn:
				note = demoReturnNotes[rng.IntN(len(demoReturnNotes))]
			}
			if _, err := s.DB.Review(ctx, r.id, by, a, note); err != nil {
				return err
			}
			if a == store.ActionReturn {
				clock = clock.Add(3 * time.Hour)
				if clock.After(limit) {
					break
				}
				if _, err := s.DB.AddComment(ctx, r.id, r.operator.ID, "Noted; I will check this on the next shift."); err != nil {
					return err
				}
			}
			clock = clock.Add(time.Duration(4+rng.IntN(40)) * time.Hour)
		}
	}
	return nil
}

// demoSpectrum returns the counts of one exposure: the pixel-integrated
// Balmer lines of cfg (spectrum.SynthesizeStark, noise-free: the SH99
// Stark shapes at the pipeline's default T_e) scaled so that the
// highest pixel reads 15 000–45 000 counts (a 16-bit detector kept below
// saturation, common practice), on a dark-plus-continuum offset of
// 300–600 counts, with shot noise (√counts, one electron per count
// assumed) and a read noise of 6 counts (typical of a scientific CCD,
// from memory).
func demoSpectrum(rng *rand.Rand, grid []float64, cfg spectrum.SynthConfig) ([]float64, error) {
	y, _, err := spectrum.SynthesizeStark(cfg)
	if err != nil {
		return nil, err
	}
	peak := 0.0
	for _, v := range y {
		peak = max(peak, v)
	}
	if !(peak > 0) {
		return nil, fmt.Errorf("demo: no line on %.1f–%.1f nm", grid[0], grid[len(grid)-1])
	}
	scale := (15000 + 30000*rng.Float64()) / peak
	offset := 300 + 300*rng.Float64()
	for i, v := range y {
		c := v*scale + offset
		y[i] = math.Round(c + math.Sqrt(c+36)*rng.NormFloat64())
	}
	return y, nil
}

func ptr(v float64) *float64 { return &v }

func pickChamber(rng *rand.Rand) int {
	x := rng.Float64()
	for i, ch := range demoChambers {
		if x < ch.weight {
			return i
		}
		x -= ch.weight
	}
	return len(demoChambers) - 1
}

// demoCSV writes a spectrum as the delimited text a spectrometer exports.
func demoCSV(x, y []float64) []byte {
	b := make([]byte, 0, 24*len(x)+120)
	b = append(b, "# synthetic Balmer spectrum, glowlog demo scenario (invented Fenwick Hollow Plasma Lab)\n"...)
	b = append(b, "wavelength_nm,counts\n"...)
	for i := range x {
		b = strconv.AppendFloat(b, x[i], 'f', 4, 64)
		b = append(b, ',')
		b = strconv.AppendFloat(b, y[i], 'g', 7, 64)
		b = append(b, '\n')
	}
	return b
}

// demoResponse is the relative spectral response of a demo spectrometer
// setting over its wavelength axis (flat: the synthetic spectra are
// generated without one).
func demoResponse(st *demoSetting, grid []float64) []byte {
	lo, hi := math.Floor(grid[0])-1, math.Ceil(grid[len(grid)-1])+1
	return []byte(fmt.Sprintf("# relative spectral response, Fenwick Hollow Plasma Lab %s (demo: flat)\n"+
		"wavelength_nm,response\n%g,1\n%g,1\n%g,1\n", st.name, lo, (lo+hi)/2, hi))
}
