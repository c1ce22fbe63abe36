package main

import (
	"fmt"
	"io"
	"strings"

	"dipline/steps"
	"dipline/workflow"
)

// kinds lists the block types a workflow may hold — the engine's analysis and catalogue
// blocks, then every step kind — with their attributes; `dipline kinds NAME` shows one.
// Defaults are shown as they would be written in the workflow.
func (c *cli) kinds(args []string) int {
	if len(args) > 1 {
		fmt.Fprintln(c.err, "dipline kinds takes at most one block type, e.g. dipline kinds detrend")
		return exitBadUser
	}
	var names []string
	for _, b := range workflow.EngineBlocks() {
		names = append(names, b.Name)
		if len(args) == 0 || args[0] == b.Name {
			describeBlock(c.out, b.Name, "", b.Doc, b.Params)
		}
	}
	for _, name := range c.reg.Names() {
		names = append(names, name)
		k := c.reg[name]
		if len(args) == 0 || args[0] == name {
			describeBlock(c.out, name, fmt.Sprintf("step kind, version %d", k.Version()), k.Doc(), k.Params())
		}
	}
	if len(args) == 1 && !contains(names, args[0]) {
		fmt.Fprintf(c.err, "There is no block type %q; the block types are %s.\n", args[0], strings.Join(names, ", "))
		return exitBadUser
	}
	return exitOK
}

// describeBlock writes one block type: its name and doc, then per attribute its name, what
// it takes, whether it is required or its default, and its doc.
func describeBlock(w io.Writer, name, what, doc string, params []steps.Param) {
	if what != "" {
		fmt.Fprintf(w, "%s (%s)\n", name, what)
	} else {
		fmt.Fprintln(w, name)
	}
	fmt.Fprintf(w, "  %s\n", doc)
	for _, p := range params {
		fmt.Fprintf(w, "\n  %s = %s\n", p.Name, p.Takes())
		switch {
		case p.Required:
			fmt.Fprintln(w, "      must be written")
		case p.Default != "":
			fmt.Fprintf(w, "      when not written: %s\n", p.DefaultAsWritten())
		default:
			fmt.Fprintln(w, "      may be left out")
		}
		fmt.Fprintf(w, "      %s\n", p.Doc)
	}
	fmt.Fprintln(w)
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}
