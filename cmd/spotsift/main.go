// Command spotsift tells, for each periodic signal in a star's radial
// velocities, whether it tracks the star's activity or looks planetary.
//
// Usage:
//
//	spotsift <command> [flags]
//
// Run "spotsift help" for the list of commands and "spotsift <command> -h"
// for the flags of one.
package main

import (
	"os"
)

func main() {
	os.Exit(run(os.Args[1:], os.Stdout, os.Stderr))
}
