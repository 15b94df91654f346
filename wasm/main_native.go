//go:build !(js && wasm)

// Command bellcheck is the program's entry. Built for the browser
// (GOOS=js GOARCH=wasm) it runs the calculator page; built natively it serves
// the page, writes the static site and runs the command line:
//
//	bellcheck fit [-json] [-plots] [-markdown|-latex] [-max-time D] [-read-timeout D] [-quiet] FILE
//	    [-data FILE] [-scale|-points|-box NAME=VALUE] [-points N]
//	    [-gaussian "NAME mean.P=V sd.P=V ..."] [-vary NAME=LO:HI]
//	                                        analyse a model file ('-' for standard input)
//	bellcheck sweep [-over NAME=LO:HI] [-steps N] [-show PATHS] [-json] FILE
//	                                        analyse at values of one constant
//	bellcheck serve [-addr ADDR] [-web DIR] serve the calculator page
//	bellcheck static [-prefix P] DIR        write the static site to DIR
//
// Exit status: 0 on success, 1 on a model or analysis error, 2 on a usage error.
package main

import (
	"fmt"
	"io"
	"os"
	"runtime/debug"

	"bellcheck/engine"
)

const usage = `usage:
  bellcheck fit [-json] [-plots] [-markdown|-latex] [-max-time D] [-read-timeout D] [-quiet] FILE
                                           analyse a model file ('-' reads standard input);
                                           refuses work forecast beyond -max-time (default 2m)
      [-data FILE]                         attach a CSV/TSV file's columns as named vectors
      [-scale NAME=log] [-points NAME=N] [-box NAME=LO:HI]   per-parameter options
      [-points N]                          grid points along every parameter not named
      [-gaussian "NAME mean.P=V sd.P=V corr.P.Q=R"]  score a Gaussian of your own (repeatable)
      [-vary NAME=LO:HI]                   mark a scalar constant to vary (a slider; sweep's range)
  bellcheck sweep [-over NAME=LO:HI] [-steps N] [-show exact.log_z,laplace.mean.0] [-json]
      [fit's flags] FILE                   analyse at N values of one constant; a table or JSON lines
  bellcheck serve [-addr ADDR] [-web DIR]  serve the calculator (default 127.0.0.1:8000)
  bellcheck static [-prefix PATH] DIR      write the static site into DIR
`

// Exit codes of the command line.
const (
	exitOK    = 0
	exitModel = 1
	exitUsage = 2
)

func main() {
	debug.SetGCPercent(engine.GCPercent)
	os.Exit(run(os.Args[1:], os.Stdin, os.Stdout, os.Stderr))
}

// run executes one command and returns the exit status.
func run(args []string, stdin io.Reader, stdout, stderr io.Writer) int {
	if len(args) == 0 {
		fmt.Fprint(stderr, usage)
		return exitUsage
	}
	switch args[0] {
	case "fit":
		return runFit(args[1:], stdin, stdout, stderr)
	case "sweep":
		return runSweep(args[1:], stdin, stdout, stderr)
	case "serve":
		return runServe(args[1:], stderr)
	case "static":
		return runStatic(args[1:], stderr)
	case "help", "-h", "-help", "--help":
		fmt.Fprint(stdout, usage)
		return exitOK
	default:
		fmt.Fprintf(stderr, "bellcheck: unknown command %q\n%s", args[0], usage)
		return exitUsage
	}
}
