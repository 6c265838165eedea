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
	"glowlog/diag/spectrum"
	"glowlog/store"
)

// DemoOptions sizes the demo scenario.
type DemoOptions struct {
	// Runs is the number of runs (0: 300).
	Runs int
	// Seed makes the scenario reproducible (0: a fixed default).
	Seed uint64
	// End is the last day of the scenario (zero: today, UTC); the runs
	// span the 182 days before it.
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
	instFWHM                                                [2]float64
	gasT, texc                                              float64
	ne                                                      func(day, power float64) float64
	uppers                                                  []int
	weight                                                  float64
}

var demoChambers = []demoChamber{
	{name: "Jet line J1", recipe: "J1 argon/hydrogen jet", recipeDesc: "Ar + 1 % H2, 2 slm, pin electrode",
		source: "plasma_jet", gas: "Ar + 1 % H2", flows: "Ar 2.0 slm, H2 20 sccm", perturber: "Ar",
		pressurePa: 101325, powerW: [2]float64{25, 35}, gapMM: 1.0, instFWHM: [2]float64{0.2, 0.25},
		gasT: 1500, texc: 6500, uppers: []int{3, 4, 5, 6}, weight: 0.4,
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
		pressurePa: 101325, powerW: [2]float64{800, 1500}, instFWHM: [2]float64{0.2, 0.3},
		gasT: 2500, texc: 7500, uppers: []int{3, 4, 5, 6, 7}, weight: 0.25,
		ne: func(_, power float64) float64 { return 3e21 * math.Pow(power/1000, 0.6) }},
	{name: "Glow tube G3", recipe: "G3 hydrogen glow", recipeDesc: "DC glow, H2 + 10 % Ar, hollow cathode",
		source: "dc_glow", gas: "H2 + 10 % Ar", flows: "H2 45 sccm, Ar 5 sccm", perturber: "H2",
		pressurePa: 600, powerW: [2]float64{40, 90}, gapMM: 30, instFWHM: [2]float64{0.2, 0.25},
		gasT: 500, texc: 4000, uppers: []int{3, 4, 5, 6, 7, 8}, weight: 0.2,
		ne: func(_, power float64) float64 { return 1.5e20 * power / 60 }},
	{name: "DBD cell D1", recipe: "D1 helium barrier", recipeDesc: "Helium dielectric barrier, 20 kHz, 1 mm gap",
		source: "dielectric_barrier", gas: "He + 0.5 % H2", flows: "He 3 slm, H2 15 sccm", perturber: "He",
		pressurePa: 101325, powerW: [2]float64{10, 25}, gapMM: 1.0, instFWHM: [2]float64{0.2, 0.35},
		gasT: 400, texc: 4500, uppers: []int{3, 4, 5}, weight: 0.15,
		ne: func(_, power float64) float64 { return 1.2e21 * math.Pow(power/15, 0.4) }},
}

// demoOperators are the invented staff (none can sign in: their
// passwords are random and never shown).
var demoOperators = []struct {
	name string
	role store.Role
}{
	{"ilse.varga", store.RoleOperator}, {"tomas.quill", store.RoleOperator}, {"nadia.brenn", store.RoleOperator},
	{"oren.falk", store.RoleOperator}, {"maud.lind", store.RoleReviewer},
}

// demoEvents are the invented chamber events of the scenario (day of the
// scenario, time of day UTC, chamber index, kind, note, staff index).
var demoEvents = []struct {
	day     int
	at      time.Duration
	chamber int
	kind    string
	note    string
	by      int
}{
	{28, 7*time.Hour + 40*time.Minute, 3, store.EventMaintenance, "Barrier plates cleaned and re-seated; gap checked at 1.0 mm.", 3},
	{61, 7*time.Hour + 15*time.Minute, 1, store.EventGasBottleChange, "H2 cylinder changed (same grade); lines purged before the first run.", 1},
	{96, 16*time.Hour + 30*time.Minute, 0, store.EventOther, "n_e on J1 down by about a quarter since the spring; pin erosion suspected, spare electrode ordered.", 2},
	{demoMaintenanceDay, 7*time.Hour + 30*time.Minute, 0, store.EventElectrodeChange, "Pin electrode replaced (tip eroded, gap had grown to 1.5 mm); gap reset to 1.0 mm.", 0},
	{141, 7*time.Hour + 50*time.Minute, 2, store.EventMaintenance, "Hollow cathode cleaned; viewport window replaced.", 3},
}

var demoReturnNotes = []string{
	"Hα peak looks clipped in the second spectrum; please check the integration time and add a dark frame.",
	"Gas temperature was taken from last week's run; measure it for this run or justify it in the notes.",
	"The instrument FWHM is the nominal value; please use the lamp measurement from this month.",
	"Hβ fit residuals show structure; try a narrower window or check the wavelength offset.",
}

// SeedDemo fills an empty database with the demo scenario: the invented
// Fenwick Hollow Plasma Lab, four chambers, five staff, opt.Runs runs over
// six months with synthetic spectra (spectrum.Synthesize) analysed by
// ReanalyzeRunTx, a slow electrode-wear drift of n_e in Jet line J1 with
// a maintenance step on day 120, and runs in every review state. Rows are
// written in a few transactions; the store's clock follows the scenario so
// that creation and review times are plausible. It prints nothing.
func SeedDemo(ctx context.Context, s *Server, adminID int64, opt DemoOptions) error {
	ctx = store.WithActor(ctx, store.Actor{Via: store.ViaDemo})
	if opt.Runs <= 0 {
		opt.Runs = 300
	}
	if opt.Seed == 0 {
		opt.Seed = 20260301
	}
	end := opt.End
	if end.IsZero() {
		end = time.Now().UTC()
	}
	end = end.UTC().Truncate(24 * time.Hour)
	start := end.AddDate(0, 0, -demoDays)
	rng := rand.New(rand.NewPCG(opt.Seed, 0x9e3779b97f4a7c15))

	admin, err := s.DB.UserByID(ctx, adminID)
	if err != nil {
		return err
	}
	realNow := s.DB.Now
	defer func() { s.DB.Now = realNow }()
	clock := start
	s.DB.Now = func() time.Time { return clock }

	var staff []store.User
	var reviewer store.User
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
			reviewer = u
		} else {
			staff = append(staff, u)
		}
	}
	chamberIDs := make([]int64, len(demoChambers))
	recipeIDs := make([]int64, len(demoChambers))
	for i, ch := range demoChambers {
		if chamberIDs[i], err = s.DB.EnsureChamber(ctx, ch.name, "Fenwick Hollow Plasma Lab"); err != nil {
			return err
		}
		if recipeIDs[i], err = s.DB.EnsureRecipe(ctx, ch.recipe, ch.recipeDesc); err != nil {
			return err
		}
	}

	// Start times: uniform over the scenario on working hours, sorted.
	times := make([]time.Time, opt.Runs)
	for i := range times {
		day := rng.IntN(demoDays)
		times[i] = start.AddDate(0, 0, day).Add(time.Duration(8*60+rng.IntN(9*60)) * time.Minute)
	}
	sort.Slice(times, func(i, j int) bool { return times[i].Before(times[j]) })
	// One survey spectrometer: 4096 pixels over 380–700 nm (0.078 nm per
	// pixel), so that every chamber's instrument FWHM (0.2 nm or more)
	// spans at least 2.5 pixels and the lines are not undersampled.
	grid := make([]float64, 4096)
	for i := range grid {
		grid[i] = 380 + 320*float64(i)/float64(len(grid)-1)
	}
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
			inst := ch.instFWHM[0] + (ch.instFWHM[1]-ch.instFWHM[0])*rng.Float64()
			inst = math.Round(inst*100) / 100
			gasT := math.Round(ch.gasT*(1+0.05*rng.NormFloat64())/10) * 10
			in := store.RunInput{Title: fmt.Sprintf("%s, %g W", ch.name, power), StartedAt: t,
				ChamberID: &chamberIDs[ci], RecipeID: &recipeIDs[ci], SourceType: ch.source, GasMixture: ch.gas,
				PressurePa: ptr(ch.pressurePa), PowerW: ptr(power), Flows: ch.flows, GratingLMM: ptr(1800.0),
				SlitUM: ptr(20.0), IntegrationMS: ptr(float64(50 * (1 + rng.IntN(10)))), InstrumentFWHMNM: ptr(inst),
				GasTemperatureK: ptr(gasT), Perturber: ch.perturber,
				Notes: "Demo run (invented Fenwick Hollow Plasma Lab); spectra are synthetic."}
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
			nSpec := 1 + rng.IntN(3)
			var atts []store.Attachment
			for k := 0; k < nSpec; k++ {
				area := 2e5 * (0.7 + 0.6*rng.Float64())
				y, _, err := spectrum.Synthesize(spectrum.SynthConfig{WavelengthNM: grid, Uppers: ch.uppers,
					ExcitationTemperatureK: texc, ElectronDensityM3: ne * (1 + 0.02*rng.NormFloat64()), GasTemperatureK: gasT,
					InstrumentFWHMNM: inst, Perturber: pert, PressurePa: ch.pressurePa, HalphaArea: area,
					BaselinePerNM: 40 + 20*rng.Float64(), NoisePerNM: area / 2000, Rand: rng})
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
			// true relative response of this invented spectrometer is flat;
			// attaching it records that the intensities are calibrated.
			rid, err := s.DB.AddAttachmentTx(ctx, tx, id, store.KindResponse, demoResponseName, demoResponse)
			if err != nil {
				tx.Rollback()
				return err
			}
			atts = append(atts, store.Attachment{ID: rid, RunID: id, Kind: store.KindResponse, Name: demoResponseName, Seq: 1, Content: demoResponse})
			st := DefaultSettings(store.Run{InstrumentFWHMNM: in.InstrumentFWHMNM, GasTemperatureK: in.GasTemperatureK,
				PressurePa: in.PressurePa, Perturber: in.Perturber})
			// The demo's lines are Voigt profiles (spectrum.Synthesize):
			// analysed with the Voigt shape they were made with.
			st.LineShape = spectrum.LineShapeVoigt
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

	// Chamber events that explain the trends: the J1 pin electrode wears
	// (n_e falls) until it is replaced on the maintenance day.
	for _, e := range demoEvents {
		at := start.AddDate(0, 0, e.day).Add(e.at)
		clock = at.Add(20 * time.Minute)
		by := staff[e.by%len(staff)]
		if _, err := s.DB.AddChamberEvent(ctx, by.ID, store.ChamberEventInput{ChamberID: chamberIDs[e.chamber], At: at, Kind: e.kind, Note: e.note}); err != nil {
			return err
		}
	}

	// Review states: older runs are mostly signed off, some returned with
	// a note (and a reply), the newest are drafts or awaiting review.
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
		for _, a := range actions {
			by, note := reviewer, ""
			switch a {
			case store.ActionSubmit:
				by = r.operator
			case store.ActionReturn:
				note = demoReturnNotes[rng.IntN(len(demoReturnNotes))]
			case store.ActionSignOff:
				if rng.Float64() < 0.2 {
					by = admin
				}
			}
			if _, err := s.DB.Review(ctx, r.id, by, a, note); err != nil {
				return err
			}
			if a == store.ActionReturn {
				clock = clock.Add(3 * time.Hour)
				if _, err := s.DB.AddComment(ctx, r.id, r.operator.ID, "Noted; I will check this on the next shift."); err != nil {
					return err
				}
			}
			clock = clock.Add(time.Duration(4+rng.IntN(40)) * time.Hour)
		}
	}
	return nil
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

// demoResponse is the relative spectral response of the demo spectrometer
// (flat: the synthetic spectra are generated without one).
const demoResponseName = "fh-s2-relative-response.csv"

var demoResponse = []byte("# relative spectral response, Fenwick Hollow Plasma Lab spectrometer FH-S2 (demo: flat)\n" +
	"wavelength_nm,response\n370,1\n450,1\n550,1\n650,1\n710,1\n")
