package specfile

import (
	"strings"
	"testing"
)

func TestLimits(t *testing.T) {
	long := strings.Repeat("7", 100)
	tests := []struct {
		name   string
		in     string
		opt    Options
		line   int
		kind   error
		msg    string
		points int // on success
	}{
		// 8 lines "1,10\n" … "8,17\n" are 5 bytes each: byte 21 is on line 5.
		{name: "file size", in: rows(8, 1, ","), opt: Options{Limits: Limits{MaxBytes: 20}}, line: 5, kind: ErrFileTooLarge, msg: "file exceeds 20 bytes"},
		{name: "file size exact", in: rows(8, 1, ","), opt: Options{Limits: Limits{MaxBytes: 40}}, points: 8},
		// "##TITLE=t\n" is 10 bytes, so byte 11 starts line 2.
		{name: "file size jcamp", in: stdJDX, opt: Options{Limits: Limits{MaxBytes: 10}}, line: 2, kind: ErrFileTooLarge, msg: "file exceeds 10 bytes"},
		{name: "line length", in: rows(3, 1, ",") + "4," + long + "\n", opt: Options{Limits: Limits{MaxLineLen: 50}}, line: 4, kind: ErrLineTooLong, msg: "line exceeds 50 bytes"},
		{name: "line length CRLF not counted", in: "1,10\r\n" + rows(7, 2, ","), opt: Options{Limits: Limits{MaxLineLen: 4}}, points: 8},
		{name: "line length jcamp", in: edit(stdJDX, "##TITLE=t", "##TITLE="+long), opt: Options{Limits: Limits{MaxLineLen: 80}}, line: 1, kind: ErrLineTooLong, msg: "line exceeds 80 bytes"},
		{name: "points text", in: rows(20, 1, ","), opt: Options{Limits: Limits{MaxPoints: 10}}, line: 11, kind: ErrTooManyPoints, msg: "more than 10 points"},
		{name: "points jcamp", in: stdJDX, opt: Options{Limits: Limits{MaxPoints: 9}}, line: 9, kind: ErrTooManyPoints, msg: "##NPOINTS=10 exceeds the limit of 9 points"},
		{name: "points xypoints", in: strings.Replace(stdXYP, "##NPOINTS=10\n", "", 1), opt: Options{Limits: Limits{MaxPoints: 9}}, line: 19, kind: ErrTooManyPoints, msg: "more than 9 points"},
		{name: "min points", in: rows(3, 1, ","), opt: Options{Limits: Limits{MinPoints: 3}}, points: 3},
		{name: "min points raised", in: rows(8, 1, ","), opt: Options{Limits: Limits{MinPoints: 9}}, line: 8, kind: ErrTooFewPoints, msg: "only 8 data points, need at least 9"},
		{name: "min points jcamp", in: stdJDX, opt: Options{Limits: Limits{MinPoints: 11}}, line: 9, kind: ErrTooFewPoints, msg: "need at least 11 points"},
	}
	for _, tt := range tests {
		t.Run(tt.name, func(t *testing.T) {
			sp, err := Read("up.dat", strings.NewReader(tt.in), tt.opt)
			if tt.points > 0 {
				if err != nil || len(sp.X) != tt.points {
					t.Fatalf("Read = %v, %v; want %d points", sp, err, tt.points)
				}
				return
			}
			if err == nil {
				t.Fatalf("no error; got %d points", len(sp.X))
			}
			checkParseError(t, err, "up.dat", tt.line, tt.kind, tt.msg)
		})
	}
}

func TestLimitsDefaults(t *testing.T) {
	got := Limits{MaxBytes: -1, MaxPoints: 5}.withDefaults()
	want := Limits{MaxBytes: DefaultMaxBytes, MaxPoints: 5, MaxLineLen: DefaultMaxLineLen, MinPoints: DefaultMinPoints}
	if got != want {
		t.Errorf("withDefaults = %+v, want %+v", got, want)
	}
}

func TestReadBadFormatPanics(t *testing.T) {
	defer func() {
		if r := recover(); r == nil {
			t.Error("Read with Format(9) did not panic")
		}
	}()
	Read("x", strings.NewReader(""), Options{Format: Format(9)})
}
