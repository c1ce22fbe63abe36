// Package workflow turns a workflow file into a graph of steps and runs it.
//
// Load parses and validates a file against the registered step kinds and reports every
// mistake as an hcl.Diagnostic with its file:line:col. A workflow is shared between
// collaborators, so Load trusts nothing in it: every path it names is opened inside the
// workflow's folder (or a folder the user allows, Access), and the file, its values and its
// data are held to stated bounds (bounds.go). Run walks the graph: it derives each
// step's key from its decoded configuration, the result keys of the steps it references and
// the digests of the files it reads, reuses a stored result when the key is known, and
// otherwise runs the step on the shared token pool and commits the result with its
// provenance. Pending says, without computing, what a run would recompute and why; Trace
// follows a result back to the bytes it came from.
//
// The package knows no astronomy: step kinds come from a steps.Registry, results are bytes
// for the cache package.
package workflow

import (
	"crypto/sha256"
	"fmt"
	"math/big"
	"path/filepath"

	"github.com/hashicorp/hcl/v2"
	"github.com/hashicorp/hcl/v2/hclsyntax"
	"github.com/zclconf/go-cty/cty"

	"dipline/steps"
)

// settingsBlock is the block type of the analysis-wide settings.
const settingsBlock = "analysis"

// Default locations, relative to the workflow file's folder.
const (
	defaultStore  = ".dipline/store.db"
	defaultOutput = "results"
)

// Workflow is a loaded and validated workflow file.
type Workflow struct {
	// Path is the file as given on the command line; Dir its absolute folder.
	Path string
	Dir  string
	// Name is the analysis block's label.
	Name string
	// Seed is the workflow seed every random stream derives from.
	Seed uint64
	// StorePath and OutputDir are absolute; Load has checked them, and made their folders
	// unless Access.Look, inside the workflow's folder or a folder the user allowed.
	StorePath string
	OutputDir string
	// Steps are in file order; Order is a topological order of them.
	Steps []*Step
	Order []*Step
	// Digest is the SHA-256 of the file's bytes.
	Digest [32]byte

	// Overrides are the settings that replaced attributes: given with --set, or by a survey
	// target's row.
	Overrides []Override
	// SetBy says where Overrides came from when not from the command line, e.g. `row T1 of
	// the target table targets.csv, line 3`; the results and messages name it.
	SetBy string

	// Catalogues are the catalogue blocks by label.
	Catalogues []*Catalogue

	byAddr     map[string]*Step
	overrides  map[string]*override
	catalogues map[string]*Catalogue
	// unreadable holds the labels of catalogue blocks that did not load, so that the steps
	// reading them are not told the block does not exist.
	unreadable map[string]bool
	// fo holds the open folders while loading; nil afterwards.
	fo *folders
}

// Step is one step block.
type Step struct {
	Kind  steps.Kind
	Label string
	// Addr is "kind.label", the step's address.
	Addr string
	// Config points at the kind's configuration struct, decoded and checked.
	Config any
	// Deps are the referenced steps, each once, in the order first referenced.
	Deps []*Step
	// Refs maps a parameter to the addresses it references.
	Refs map[string][]string
	// Files maps a parameter to the files it reads.
	Files map[string][]*FileInput
	// Rows maps a CatalogueRow parameter to the row it reads.
	Rows map[string]*RowInput
	// Settings maps a settings parameter (steps.SettingsRef) to the step whose
	// configuration it takes. That step is not a dependency: its result is not read.
	Settings map[string]*Step

	settingsAddr map[string]string // the settings parameters' addresses as written

	block      hcl.Range
	attrRanges map[string]hcl.Range
}

// FileInput is one file a step reads: read once at load, hashed, and handed over as bytes.
type FileInput struct {
	// Path is the path as written in the workflow.
	Path   string
	Data   []byte
	Digest [32]byte
}

// Step returns the step at an address, or nil.
func (w *Workflow) Step(addr string) *Step { return w.byAddr[addr] }

// Load reads, parses and validates a workflow file, confined to its folder. The returned
// diagnostics may hold warnings alongside a usable workflow; on errors the workflow is nil.
func Load(path string, reg steps.Registry) (*Workflow, hcl.Diagnostics) {
	return LoadWithAccess(path, reg, nil, Access{})
}

// LoadWith is Load with command-line overrides applied to step attributes.
func LoadWith(path string, reg steps.Registry, overrides []Override) (*Workflow, hcl.Diagnostics) {
	return LoadWithAccess(path, reg, overrides, Access{})
}

// LoadWithAccess is LoadWith with the folders beyond the workflow's own that the user lets
// it use, and the bound on the data it reads.
//
// Every diagnostic is in our own words (words.go) and carries the line it is about, so
// FormatDiagnostics can show it without opening the file again.
func LoadWithAccess(path string, reg steps.Registry, overrides []Override, acc Access) (*Workflow, hcl.Diagnostics) {
	srcs := newSources(reg)
	w, diags := load(path, reg, overrides, acc, srcs)
	return w, srcs.finish(diags)
}

func load(path string, reg steps.Registry, overrides []Override, acc Access, srcs *sources) (*Workflow, hcl.Diagnostics) {
	src, diags := readWorkflow(path)
	if diags.HasErrors() {
		return nil, diags
	}
	srcs.texts[path] = src
	for _, o := range overrides {
		// The name parseOverrides gives a --set value's diagnostics.
		srcs.texts["--set "+o.Addr+"."+o.Attr] = []byte(o.Value)
	}
	f, diags := parseWorkflow(src, path)
	if f != nil {
		srcs.body, _ = f.Body.(*hclsyntax.Body)
	}
	if diags.HasErrors() {
		return nil, diags
	}
	dir, err := filepath.Abs(filepath.Dir(path))
	if err != nil {
		return nil, hcl.Diagnostics{{Severity: hcl.DiagError, Summary: fmt.Sprintf("The workflow's folder cannot be found: %v.", err)}}
	}
	fo, d := openFolders(dir, acc)
	if d.HasErrors() {
		return nil, d
	}
	defer fo.close()
	w := &Workflow{Path: path, Dir: dir, Digest: sha256.Sum256(src), byAddr: map[string]*Step{}, fo: fo}
	defer func() { w.fo = nil }()
	if d := w.parseOverrides(overrides); d.HasErrors() {
		return nil, d
	}

	schema := &hcl.BodySchema{Blocks: []hcl.BlockHeaderSchema{{Type: settingsBlock, LabelNames: []string{"name"}},
		{Type: catalogueBlock, LabelNames: []string{"label"}}}}
	for _, name := range reg.Names() {
		schema.Blocks = append(schema.Blocks, hcl.BlockHeaderSchema{Type: name, LabelNames: []string{"label"}})
	}
	content, d := f.Body.Content(schema)
	diags = append(diags, d...)
	// Catalogues first: steps name their rows.
	diags = append(diags, w.decodeCatalogues(content.Blocks)...)
	places, sawSettings, d := w.decodeBlocks(content.Blocks, reg, path)
	diags = append(diags, d...)
	if !sawSettings && !writesBlock(f, settingsBlock) { // one without a label is reported already
		diags = append(diags, &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "The workflow has no analysis block.",
			Detail:  `A workflow starts with one, naming the analysis and its seed, e.g. analysis "my-star" { seed = 1 }.`,
			Subject: &hcl.Range{Filename: path, Start: hcl.InitialPos, End: hcl.InitialPos}})
	}
	// Each stage needs the one before it clean; the folders are made last, so that a
	// workflow with mistakes makes none.
	for _, stage := range []func() hcl.Diagnostics{
		w.checkOverridesUsed, w.resolve, func() hcl.Diagnostics { return w.place(places) },
	} {
		if diags.HasErrors() {
			return nil, diags
		}
		diags = append(diags, stage()...)
	}
	if diags.HasErrors() {
		return nil, diags
	}
	return w, diags
}

// decodeCatalogues reads every catalogue block, each label once; a catalogue that does not
// load is marked unreadable, so the steps naming it are not told it does not exist.
func (w *Workflow) decodeCatalogues(blocks hcl.Blocks) hcl.Diagnostics {
	var diags hcl.Diagnostics
	w.catalogues, w.unreadable = map[string]*Catalogue{}, map[string]bool{}
	for _, b := range blocks {
		if b.Type != catalogueBlock {
			continue
		}
		if prev := w.catalogues[b.Labels[0]]; prev != nil {
			diags = append(diags, &hcl.Diagnostic{Severity: hcl.DiagError,
				Summary: fmt.Sprintf("There are two catalogue blocks %s, and each catalogue needs a label of its own.", quote(b.Labels[0])),
				Detail:  "Rename one, or delete it.", Subject: b.DefRange.Ptr()})
			continue
		}
		c, d := w.decodeCatalogue(b)
		diags = append(diags, d...)
		if c != nil {
			w.catalogues[c.Label] = c
			w.Catalogues = append(w.Catalogues, c)
		} else {
			w.unreadable[b.Labels[0]] = true
		}
	}
	return diags
}

// decodeBlocks reads the analysis block (one) and every step block, and returns where the
// store and results go and whether there was an analysis block.
func (w *Workflow) decodeBlocks(blocks hcl.Blocks, reg steps.Registry, path string) (settingsPlaces, bool, hcl.Diagnostics) {
	var diags hcl.Diagnostics
	sawSettings := false
	places := settingsPlaces{store: defaultStore, output: defaultOutput,
		storeAt: hcl.Range{Filename: path, Start: hcl.InitialPos, End: hcl.InitialPos}}
	places.outputAt = places.storeAt
	for _, b := range blocks {
		switch {
		case b.Type == catalogueBlock:
		case b.Type == settingsBlock && sawSettings:
			diags = append(diags, &hcl.Diagnostic{Severity: hcl.DiagError, Summary: "This is a second analysis block, and a workflow has one.",
				Detail: "Move its settings into the first and delete it.", Subject: b.DefRange.Ptr()})
		case b.Type == settingsBlock:
			sawSettings = true
			diags = append(diags, w.decodeSettings(b, &places)...)
		default:
			diags = append(diags, w.decodeStepBlock(b, reg[b.Type])...)
		}
	}
	return places, sawSettings, diags
}

// decodeStepBlock reads one step block under a label that is a name and new.
func (w *Workflow) decodeStepBlock(b *hcl.Block, kind steps.Kind) hcl.Diagnostics {
	s := &Step{Kind: kind, Label: b.Labels[0], Addr: b.Type + "." + b.Labels[0], block: b.DefRange,
		Refs: map[string][]string{}, Files: map[string][]*FileInput{}, Rows: map[string]*RowInput{}, Settings: map[string]*Step{}, settingsAddr: map[string]string{}, attrRanges: map[string]hcl.Range{}}
	if !hclsyntax.ValidIdentifier(s.Label) {
		return hcl.Diagnostics{{Severity: hcl.DiagError,
			Summary: fmt.Sprintf("The label %s cannot name a step, as other steps could not refer to it as %s.<label>.", quote(s.Label), b.Type),
			Detail:  "A label holds letters, digits, '_' and '-', and starts with a letter.",
			Subject: b.LabelRanges[0].Ptr()}}
	}
	if prev := w.byAddr[s.Addr]; prev != nil {
		return hcl.Diagnostics{{Severity: hcl.DiagError,
			Summary: fmt.Sprintf("There are two steps %s, on line %d and on line %d.", s.Addr, prev.block.Start.Line, b.DefRange.Start.Line),
			Detail:  "Give each step a label of its own.", Subject: b.DefRange.Ptr()}}
	}
	diags := w.decodeStep(s, b.Body)
	w.Steps = append(w.Steps, s)
	w.byAddr[s.Addr] = s
	return diags
}

// writesBlock tells whether the file writes a block of this type at its top level, even one
// the schema check refused.
func writesBlock(f *hcl.File, typ string) bool {
	if body, ok := f.Body.(*hclsyntax.Body); ok {
		for _, b := range body.Blocks {
			if b.Type == typ {
				return true
			}
		}
	}
	return false
}

// settingsPlaces are the store and output paths as the analysis block writes them (or
// their defaults), with where they are written.
type settingsPlaces struct {
	store, output     string
	storeAt, outputAt hcl.Range
}

func (w *Workflow) decodeSettings(b *hcl.Block, places *settingsPlaces) hcl.Diagnostics {
	w.Name = b.Labels[0]
	places.storeAt, places.outputAt = b.DefRange, b.DefRange
	content, diags := b.Body.Content(bodySchemaOf(paramsOf[settingsAttrs]()))
	if a := content.Attributes["seed"]; a != nil {
		v, d := a.Expr.Value(nil)
		diags = append(diags, d...)
		if !d.HasErrors() {
			if seed, ok := seedOf(v); ok {
				w.Seed = seed
			} else {
				diags = append(diags, attrDiag(a.Expr.Range(), "The seed must be a whole number from 0 to 2^53.", "For example seed = 4711."))
			}
		}
	}
	for _, name := range []string{"store", "output"} {
		a := content.Attributes[name]
		if a == nil {
			continue
		}
		v, d := a.Expr.Value(nil)
		diags = append(diags, d...)
		if d.HasErrors() {
			continue
		}
		s, ok := str(v)
		if !ok || s == "" {
			diags = append(diags, attrDiag(a.Expr.Range(), fmt.Sprintf("%s takes a path in quotes, relative to the workflow's folder.", name),
				fmt.Sprintf("For example %s = %q.", name, map[string]string{"store": defaultStore, "output": defaultOutput}[name])))
			continue
		}
		if name == "store" {
			places.store, places.storeAt = s, a.Expr.Range()
		} else {
			places.output, places.outputAt = s, a.Expr.Range()
		}
	}
	return diags
}

// place checks the store and output paths and makes their folders, inside the workflow's
// folder or one the user allowed.
func (w *Workflow) place(p settingsPlaces) hcl.Diagnostics {
	var diags hcl.Diagnostics
	store, d := w.fo.place(p.store, p.storeAt, "store", false)
	if d != nil {
		diags = append(diags, d)
	}
	out, d := w.fo.place(p.output, p.outputAt, "output", true)
	if d != nil {
		diags = append(diags, d)
	}
	w.StorePath, w.OutputDir = store, out
	return diags
}

// seedOf reads a seed exactly: HCL keeps numbers at arbitrary precision, so 2^53 + 1 is
// refused rather than rounded onto 2^53 (two seeds must never give the same draws).
func seedOf(v cty.Value) (uint64, bool) {
	if v.IsNull() || !v.IsKnown() || v.Type() != cty.Number {
		return 0, false
	}
	b := v.AsBigFloat()
	if !b.IsInt() || b.Sign() < 0 {
		return 0, false
	}
	u, acc := b.Uint64()
	if acc != big.Exact || u > 1<<53 {
		return 0, false
	}
	return u, true
}

func number(v cty.Value) (float64, bool) {
	if v.IsNull() || !v.IsKnown() {
		return 0, false
	}
	if v.Type() != cty.Number {
		return 0, false
	}
	f, _ := v.AsBigFloat().Float64()
	return f, true
}

func str(v cty.Value) (string, bool) {
	if v.IsNull() || !v.IsKnown() || v.Type() != cty.String {
		return "", false
	}
	return v.AsString(), true
}

// attrDiag is an error at a place in the workflow. As in all our diagnostics, summary is
// the first sentence of the message (what is wrong) and detail the rest (what to write
// instead, or ""); Message joins them.
func attrDiag(r hcl.Range, summary, detail string) *hcl.Diagnostic {
	return &hcl.Diagnostic{Severity: hcl.DiagError, Summary: summary, Detail: detail, Subject: r.Ptr()}
}

// readFile reads a file a step or a catalogue names, inside the workflow's folder or one
// the user allowed, within the bound on data (access.go).
func (w *Workflow) readFile(p string, r hcl.Range) (*FileInput, *hcl.Diagnostic) {
	return w.fo.readFile(p, r)
}
