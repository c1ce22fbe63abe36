package steps

import (
	"context"
	"fmt"
	"reflect"
)

// Typed is a step kind written against its own configuration struct C (see Param for the
// tags): Run receives the decoded configuration typed, so a misspelt attribute is a
// compile error, not a silent zero. Define turns it into the engine's Kind.
type Typed[C any] interface {
	Name() string
	Version() int
	Doc() string
	Random() bool
	// Check checks the decoded configuration as a whole (attributes that exclude each
	// other, ranges a type cannot say) and may complete it (derived fields). An *AttrError
	// points the user at the attribute at fault.
	Check(c *C) error
	Run(ctx context.Context, c *C, in Inputs, env Env) (Artifact, error)
	Decode(b []byte) (Artifact, error)
}

// Define makes a Kind of a kind written against its configuration struct C. A malformed
// tag is reported when the kind is registered (NewRegistry).
func Define[C any](k Typed[C]) Kind {
	s, err := SchemaOf[C]()
	if err != nil {
		s = &Schema{typ: reflect.TypeFor[C](), err: err}
	}
	return defined[C]{k: k, schema: s}
}

// defined adapts a Typed kind to Kind.
type defined[C any] struct {
	k      Typed[C]
	schema *Schema
}

var (
	_ Kind      = defined[struct{}]{}
	_ Inspector = defined[struct{}]{}
	_ Presenter = defined[struct{}]{}
	_ Combiner  = defined[struct{}]{}
)

func (d defined[C]) Name() string                      { return d.k.Name() }
func (d defined[C]) Version() int                      { return d.k.Version() }
func (d defined[C]) Doc() string                       { return d.k.Doc() }
func (d defined[C]) Random() bool                      { return d.k.Random() }
func (d defined[C]) Schema() *Schema                   { return d.schema }
func (d defined[C]) Params() []Param                   { return d.schema.params }
func (d defined[C]) Decode(b []byte) (Artifact, error) { return d.k.Decode(b) }

// typed returns cfg as the kind's configuration; anything else is a fault of the program.
func (d defined[C]) typed(cfg any) (*C, error) {
	c, ok := cfg.(*C)
	if !ok || c == nil {
		return nil, fmt.Errorf("%s: configuration is %T, not *%s", d.k.Name(), cfg, reflect.TypeFor[C]())
	}
	return c, nil
}

func (d defined[C]) Check(cfg any) error {
	c, err := d.typed(cfg)
	if err != nil {
		return err
	}
	return d.k.Check(c)
}

func (d defined[C]) Run(ctx context.Context, cfg any, in Inputs, env Env) (Artifact, error) {
	c, err := d.typed(cfg)
	if err != nil {
		return nil, err
	}
	return d.k.Run(ctx, c, in, env)
}

// Inspect looks at the data when the kind can (it has `Inspect(*C, Inputs) error`).
func (d defined[C]) Inspect(cfg any, in Inputs) error {
	i, ok := d.k.(interface{ Inspect(*C, Inputs) error })
	if !ok {
		return nil
	}
	c, err := d.typed(cfg)
	if err != nil {
		return err
	}
	return i.Inspect(c, in)
}

// Present shows the result when the kind can (it has
// `Present(*C, Artifact, Inputs) (Presentation, error)`); otherwise it shows nothing.
func (d defined[C]) Present(cfg any, art Artifact, in Inputs) (Presentation, error) {
	p, ok := d.k.(interface {
		Present(*C, Artifact, Inputs) (Presentation, error)
	})
	if !ok {
		return Presentation{}, nil
	}
	c, err := d.typed(cfg)
	if err != nil {
		return Presentation{}, err
	}
	return p.Present(c, art, in)
}

// Combine adds up a survey's results when the kind can (it is a Combiner); otherwise it
// gives nothing.
func (d defined[C]) Combine(ids []string, arts []Artifact) (Combined, error) {
	c, ok := d.k.(Combiner)
	if !ok {
		return Combined{}, nil
	}
	return c.Combine(ids, arts)
}
