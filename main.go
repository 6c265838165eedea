// Command glowlog is a hydrogen Balmer-line plasma diagnostics tool: a web
// application (serve) and a command-line analysis engine (analyze).
//
// Usage:
//
//	glowlog [serve]                  start the web application (default)
//	glowlog analyze [flags] FILE...  analyse measurement sets or spectra, print JSON
//	glowlog instrument [flags] FILE  measure the instrument function from a lamp spectrum
//	glowlog backup [--db FILE] OUT   consistent copy of a live database, checked
//	glowlog restore [--db FILE] BAK  put a backup back (server stopped)
//	glowlog watch DIR --server URL   upload new spectrum files from a folder
//
// See README.md for the input and output fields.
package main

import (
	"fmt"
	"io"
	"os"
	"strings"

	"glowlog/diag"
)

// Exit codes.
const (
	exitOK    = ExitOK
	exitError = ExitError
	exitInput = ExitInput
)

// maxInputBytes bounds what analyze reads from one measurement set.
const maxInputBytes = MaxMeasurementBytes

func main() {
	os.Exit(run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr))
}

// run dispatches a subcommand and returns the process exit status.
func run(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	cmd := "serve"
	if len(args) > 0 && (!strings.HasPrefix(args[0], "-") || isHelp(args[0])) {
		cmd, args = args[0], args[1:]
	}
	switch cmd {
	case "analyze":
		return runAnalyze(args, stdin, stdout, stderr)
	case "instrument":
		return runInstrument(args, stdout, stderr)
	case "user":
		return UserCommand(args, stdin, stdout, stderr)
	case "token":
		return TokenCommand(args, stdout, stderr)
	case "serve":
		return runServe(args, stdout, stderr)
	case "backup":
		return runBackup(args, stdout, stderr)
	case "restore":
		return runRestore(args, stdout, stderr)
	case "watch":
		return runWatch(args, stdout, stderr)
	case "version":
		fmt.Fprintf(stdout, "glowlog %s (%s)\n", diag.EngineVersion, diag.ConstantsSet)
		return exitOK
	case "help", "-h", "-help", "--help":
		fmt.Fprint(stdout, usage)
		return exitOK
	}
	fmt.Fprintf(stderr, "glowlog: unknown command %q\n%s", cmd, usage)
	return exitInput
}

const usage = `usage: glowlog COMMAND [flags] [ARGS]   (flags may come before or after the arguments; -- ends them)

commands:
  serve                          start the web application (the default command)
  analyze [flags] FILE...        analyse measurement sets (JSON) or spectra (text, JCAMP-DX), print JSON
  instrument [flags] FILE        measure the instrument function from a calibration-lamp spectrum
  watch DIR --server URL ...     upload each new spectrum written into DIR to a glowlog server, once
  user add NAME --role R         create an account (password on standard input)
  token create NAME              print a new API token for user NAME, once
  backup [--force] OUT           write a checked, consistent copy of the database (also while serve runs)
  restore BACKUP                 put a backup in place of the database (stop serve first; the replaced
                                 file is kept as FILE.before-restore-TIME)
  version                        print the version
  help                           print this list

"glowlog COMMAND -h" lists the flags of a command.
`

// isHelp says whether a first argument asks for the command list.
func isHelp(a string) bool {
	return a == "-h" || a == "-help" || a == "--help"
}

func runServe(args []string, stdout, stderr io.Writer) int {
	return ServeCommand(args, stdout, stderr)
}

func runAnalyze(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	return AnalyzeCommand(args, stdin, stdout, stderr)
}

func runInstrument(args []string, stdout, stderr io.Writer) int {
	return InstrumentCommand(args, stdout, stderr)
}
