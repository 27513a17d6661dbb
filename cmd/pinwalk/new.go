package main

import (
	"errors"
	"flag"
	"fmt"
	"io"
	"io/fs"
	"os"
	"strings"

	"pinwalk/expect/design"
)

func runNew(args []string, stdout, stderr io.Writer) int {
	fset := flag.NewFlagSet("new", flag.ContinueOnError)
	fset.SetOutput(stderr)
	from := fset.String("from", "", "the template to start from (see --list)")
	list := fset.Bool("list", false, "list the templates, one line each")
	force := fset.Bool("force", false, "overwrite FILE if it exists")
	fset.Usage = func() {
		fmt.Fprintln(stderr, `Usage: pinwalk new FILE --from TEMPLATE [--force]
       pinwalk new --list

Writes a commented design file to start from. Every value ending in ? is a
placeholder: replace it with your amp's value and drop the ?. Then run
pinwalk check FILE (it lists the placeholders left), pinwalk show FILE and
pinwalk expect FILE. FILE is not overwritten unless --force is given.`)
		fset.PrintDefaults()
	}
	// Accept the file before or after the flags.
	var files []string
	rest := args
	for {
		if err := fset.Parse(rest); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				return exitOK
			}
			return exitUsage
		}
		if fset.NArg() == 0 {
			break
		}
		files = append(files, fset.Arg(0))
		rest = fset.Args()[1:]
	}
	if *list {
		for _, t := range design.Templates() {
			fmt.Fprintf(stdout, "%-20s %s\n", t.Name, t.Summary)
		}
		return exitOK
	}
	if len(files) != 1 || *from == "" {
		if len(files) == 1 && *from == "" {
			fmt.Fprintf(stderr, "pinwalk new: which template? add --from NAME (pinwalk new --list shows them: %s)\n", strings.Join(design.TemplateNames(), ", "))
		} else {
			fset.Usage()
		}
		return exitUsage
	}
	file := files[0]
	t, err := design.TemplateByName(*from)
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk new: %v\n", err)
		return exitUsage
	}
	flags := os.O_WRONLY | os.O_CREATE | os.O_EXCL
	if *force {
		flags = os.O_WRONLY | os.O_CREATE | os.O_TRUNC
	}
	f, err := os.OpenFile(file, flags, 0o644)
	if errors.Is(err, fs.ErrExist) {
		fmt.Fprintf(stderr, "pinwalk new: %s already exists: not overwritten (add --force to replace it)\n", file)
		return exitProblems
	}
	if err != nil {
		fmt.Fprintf(stderr, "pinwalk new: %v\n", err)
		return exitFailure
	}
	if _, err := f.Write(t.Text); err != nil {
		f.Close()
		fmt.Fprintf(stderr, "pinwalk new: %v\n", err)
		return exitFailure
	}
	if err := f.Close(); err != nil {
		fmt.Fprintf(stderr, "pinwalk new: %v\n", err)
		return exitFailure
	}
	n := strings.Count(string(t.Text), "?,") + strings.Count(string(t.Text), "?}") + strings.Count(string(t.Text), "?]")
	fmt.Fprintf(stdout, "wrote %s from the %s template (%s)\n", file, t.Name, t.Summary)
	fmt.Fprintf(stdout, "next: replace the placeholder values (ending in ?, about %d), then\n  pinwalk check %s\n  pinwalk show %s\n  pinwalk expect %s\n", n, file, file, file)
	return exitOK
}
