package specfile_test

import (
	"errors"
	"fmt"
	"os"
	"strings"

	"glowlog/diag/specfile"
)

func ExampleRead() {
	f, err := os.Open("testdata/halpha_asdf.jdx")
	if err != nil {
		panic(err)
	}
	defer f.Close()
	sp, err := specfile.Read("halpha_asdf.jdx", f, specfile.Options{})
	if err != nil {
		panic(err)
	}
	fmt.Println(sp.Format, sp.XUnit, sp.YUnit, len(sp.X))
	fmt.Printf("peak %.0f %s at %.2f %s\n", sp.Y[10], sp.YUnit, sp.X[10], sp.XUnit)
	// Output:
	// jcamp-dx nm COUNTS 20
	// peak 3650 COUNTS at 656.28 nm
}

func ExampleReadText() {
	in := "# integration_ms: 100\n" +
		"Wavelength (nm);Intensity (counts)\n" +
		"656,10;1210,5\n656,15;1302,0\n656,20;1788,5\n656,25;2410,0\n" +
		"656,30;2398,5\n656,35;1770,0\n656,40;1299,5\n656,45;1205,0\n"
	sp, err := specfile.ReadText("scan.csv", strings.NewReader(in), specfile.TextOptions{})
	if err != nil {
		panic(err)
	}
	fmt.Println(sp.XUnit, sp.YUnit, sp.Meta["integration_ms"], sp.X[0], sp.Y[0])
	// Output: nm counts 100 656.1 1210.5
}

func ExampleParseError() {
	in := "wavelength_nm,counts\n656.1,1210\n656.2,12;5\n"
	_, err := specfile.ReadText("scan.csv", strings.NewReader(in), specfile.TextOptions{})
	var pe *specfile.ParseError
	if errors.As(err, &pe) {
		fmt.Println(pe.Line, errors.Is(err, specfile.ErrSyntax))
	}
	fmt.Println(err)
	// Output:
	// 3 true
	// scan.csv:3: non-numeric intensity "12;5"
}

func ExampleSpectrum_WavelengthNM() {
	sp := &specfile.Spectrum{
		X:     []float64{15200, 15237.4, 15280}, // cm⁻¹, ascending
		Y:     []float64{1, 9, 2},
		XUnit: specfile.WavenumberPerCM,
	}
	wl, y, err := sp.WavelengthNM()
	if err != nil {
		panic(err)
	}
	for i := range wl {
		fmt.Printf("%.2f nm %g\n", wl[i], y[i])
	}
	// Output:
	// 654.45 nm 2
	// 656.28 nm 9
	// 657.89 nm 1
}

func ExampleWriteJCAMP() {
	sp := &specfile.Spectrum{
		X:     []float64{656.0, 656.1, 656.2, 656.3, 656.4, 656.5, 656.6, 656.7},
		Y:     []float64{100, 100, 100, 180, 420, 180, 100, 100},
		XUnit: specfile.NM, YUnit: "COUNTS", Title: "Fenwick Hollow test",
		Meta: map[string]string{},
	}
	if err := specfile.WriteJCAMP(os.Stdout, sp); err != nil {
		panic(err)
	}
	// Output:
	// ##TITLE=Fenwick Hollow test
	// ##JCAMP-DX=5.01
	// ##DATA TYPE=UV/VIS SPECTRUM
	// ##ORIGIN=
	// ##OWNER=
	// ##XUNITS=NANOMETERS
	// ##YUNITS=COUNTS
	// ##XFACTOR=1
	// ##YFACTOR=1
	// ##FIRSTX=656
	// ##LASTX=656.7
	// ##DELTAX=0.1
	// ##NPOINTS=8
	// ##FIRSTY=100
	// ##XYDATA=(X++(Y..Y))
	// 656 A00%TQ0K40k40q0%
	// 656.7 A00
	// ##END=
}
