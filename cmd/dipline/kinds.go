package main

import (
	"fmt"
	"io"
	"strconv"
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
		fmt.Fprintf(w, "\n  %s = %s\n", p.Name, takes(p))
		switch {
		case p.Required:
			fmt.Fprintln(w, "      must be written")
		case p.Default != "":
			fmt.Fprintf(w, "      when not written: %s\n", writtenDefault(p))
		default:
			fmt.Fprintln(w, "      may be left out")
		}
		fmt.Fprintf(w, "      %s\n", p.Doc)
	}
	fmt.Fprintln(w)
}

// takes says in words what an attribute takes.
func takes(p steps.Param) string {
	unitsOf := func() string { return " (" + strings.Join(p.Dim.Names(), ", ") + ")" }
	switch p.Type {
	case steps.Number:
		return "a number"
	case steps.Integer:
		return "a whole number"
	case steps.Bool:
		return "true or false"
	case steps.String:
		if len(p.Choices) > 0 {
			return "one of " + quoted(p.Choices)
		}
		return "a string"
	case steps.Quantity:
		return "a " + p.Dim.Name + " with its unit" + unitsOf()
	case steps.QuantityRange:
		return "two " + p.Dim.Name + "s, low then high" + unitsOf()
	case steps.Measured:
		return "a " + p.Dim.Name + " ± its uncertainty, with its unit" + unitsOf()
	case steps.StringList:
		return "a list of strings"
	case steps.StringMap:
		return "an object of strings"
	case steps.FileList:
		return "a file, or a list of files"
	case steps.StepRef, steps.StepRefList:
		to := "any step"
		if len(p.Kinds) > 0 {
			to = "a " + strings.Join(p.Kinds, " or ") + " step"
		}
		if p.Type == steps.StepRefList {
			return "a list, each " + to + " (kind.label)"
		}
		return to + " (kind.label)"
	case steps.CatalogueRow:
		return "a catalogue row, catalogue.label[\"id\"]"
	}
	return p.Type.String()
}

// writtenDefault writes a default as it would stand in a workflow: numbers and true/false
// bare, everything else quoted, ranges and lists in brackets.
func writtenDefault(p steps.Param) string {
	switch p.Type {
	case steps.Number, steps.Integer, steps.Bool:
		return p.Default
	case steps.QuantityRange, steps.StringList:
		parts := strings.Split(p.Default, ",")
		for i := range parts {
			parts[i] = strings.TrimSpace(parts[i])
		}
		return "[" + quoted(parts) + "]"
	}
	return strconv.Quote(p.Default)
}

func quoted(list []string) string {
	q := make([]string, len(list))
	for i, s := range list {
		q[i] = strconv.Quote(s)
	}
	return strings.Join(q, ", ")
}

func contains(list []string, s string) bool {
	for _, x := range list {
		if x == s {
			return true
		}
	}
	return false
}
