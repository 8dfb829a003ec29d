// Command tracelift turns paper electrocardiograms back into data.
package main

import (
	"os"

	"tracelift/internal/cli"
)

func main() { os.Exit(cli.Main(os.Args[1:], os.Stdin, os.Stdout, os.Stderr)) }
