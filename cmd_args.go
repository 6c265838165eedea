package main

import (
	"errors"
	"flag"
	"strings"
)

// ParseInterleaved parses args with fs like fs.Parse, but lets flags and
// positional arguments come in any order: "analyze a.csv --min-snr 3 b.csv"
// is "analyze --min-snr 3 a.csv b.csv". A flag that takes a value consumes
// the next argument unless written as --name=value; boolean flags never
// do. "--" ends the flags: everything after it is positional, even when it
// starts with "-". A lone "-" (standard input) is positional. Unknown flags
// are left to fs.Parse, which reports them.
func ParseInterleaved(fs *flag.FlagSet, args []string) error {
	flags := make([]string, 0, len(args))
	var pos []string
	for i := 0; i < len(args); i++ {
		a := args[i]
		if a == "--" {
			pos = append(pos, args[i+1:]...)
			break
		}
		if a == "-" || !strings.HasPrefix(a, "-") {
			pos = append(pos, a)
			continue
		}
		flags = append(flags, a)
		name := strings.TrimPrefix(strings.TrimPrefix(a, "-"), "-")
		if strings.Contains(name, "=") {
			continue
		}
		f := fs.Lookup(name)
		if f == nil || isBoolFlag(f) {
			continue
		}
		if i+1 < len(args) {
			flags = append(flags, args[i+1])
			i++
		}
	}
	return fs.Parse(append(append(flags, "--"), pos...))
}

func isBoolFlag(f *flag.Flag) bool {
	b, ok := f.Value.(interface{ IsBoolFlag() bool })
	return ok && b.IsBoolFlag()
}

// splitCommandArgs parses the flags of a command anywhere among its
// positional arguments and returns the positional ones.
func splitCommandArgs(fs *flag.FlagSet, args []string) ([]string, error) {
	if err := ParseInterleaved(fs, args); err != nil {
		return nil, err
	}
	return fs.Args(), nil
}

// flagExit is the exit status after a flag error: 0 for -h/--help (the
// usage was asked for and printed), 2 otherwise.
func flagExit(err error) int {
	if errors.Is(err, flag.ErrHelp) {
		return ExitOK
	}
	return ExitInput
}
