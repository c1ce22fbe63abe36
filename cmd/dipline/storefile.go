package main

import (
	"errors"
	"fmt"
	"os"

	"github.com/hashicorp/hcl/v2"
	"github.com/hashicorp/hcl/v2/hclsyntax"

	"dipline/cache"
	"dipline/workflow"
)

// notAStore refuses a workflow whose store names a file that is not a dipline store (a
// data file, the workflow itself): it says so with the line of `store =` and reports true.
// It runs after the workflow has loaded and before any command takes the store's run lock
// or opens it, so nothing is written beside the file or into it.
func (c *cli) notAStore(w *workflow.Workflow) bool {
	err := cache.CheckIsStore(w.StorePath)
	var ne *cache.NotAStoreError
	if !errors.As(err, &ne) {
		return false // a store, none yet, or a problem the store's own commands report
	}
	r := storeAttrRange(w.Path)
	if r == nil {
		fmt.Fprintf(c.err, "%s: the store %s is not a dipline store: it does not begin as a store file does, and dipline leaves it as it is. "+
			"Move it aside, or name another file with store = \".dipline/store.db\" in the analysis block.\n", w.Path, rel(w.StorePath))
		return true
	}
	c.printDiags(hcl.Diagnostics{{
		Severity: hcl.DiagError,
		Summary:  fmt.Sprintf("store names %s, which is not a dipline store: it does not begin as a store file does, and dipline leaves it as it is.", rel(w.StorePath)),
		Detail:   "Name a file of its own for the store (it is made on the first run), for example store = \".dipline/store.db\".",
		Subject:  r,
	}})
	return true
}

// storeAttrRange finds where the analysis block of the workflow file at path writes
// `store =`, or nil when it does not (the store is then the default) or the file cannot
// be read again. The workflow has loaded already, so the file parses.
func storeAttrRange(path string) *hcl.Range {
	src, err := os.ReadFile(path)
	if err != nil {
		return nil
	}
	f, diags := hclsyntax.ParseConfig(src, path, hcl.InitialPos)
	if diags.HasErrors() || f == nil {
		return nil
	}
	body, ok := f.Body.(*hclsyntax.Body)
	if !ok {
		return nil
	}
	for _, b := range body.Blocks {
		if b.Type != "analysis" {
			continue
		}
		if a := b.Body.Attributes["store"]; a != nil {
			r := a.Expr.Range()
			return &r
		}
	}
	return nil
}
