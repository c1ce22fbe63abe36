package workflow

import (
	"github.com/hashicorp/hcl/v2"

	"dipline/steps"
)

// The engine's own blocks are described like a step kind's configuration, so that `dipline
// kinds` lists them beside the kinds and their decoders cannot drift from the description:
// decodeSettings and decodeCatalogue take their attribute names from these structs.

// settingsAttrs is what the analysis block may say.
type settingsAttrs struct {
	Seed   int     `step:"seed,required" doc:"the workflow's seed, a whole number from 0 to 2^53; every random draw of every step derives from it and the step's name"`
	Store  *string `step:"store" doc:"the content store's file, relative to the workflow's folder; by default .dipline/store.db"`
	Output *string `step:"output" doc:"the folder results are written to, relative to the workflow's folder; by default results"`
}

// catalogueAttrs is what a catalogue block may say.
type catalogueAttrs struct {
	File    string            `step:"file,required" doc:"the catalogue, a CSV file with a header line; steps name one of its rows as catalogue.label[\"id\"]"`
	ID      *string           `step:"id" doc:"the name of the column holding each row's id; by default id"`
	Columns map[string]string `step:"columns" doc:"renames: the names steps ask for mapped to this file's columns, e.g. { parallax = \"plx\" }; other names are matched without regard to case"`
}

// Block describes a block type that is not a step kind.
type Block struct {
	Name   string
	Doc    string
	Params []steps.Param
}

// EngineBlocks describes the analysis and catalogue blocks.
func EngineBlocks() []Block {
	return []Block{
		{settingsBlock, "The analysis: its name (the label), its seed, and where its store and results live. One per workflow.", paramsOf[settingsAttrs]()},
		{catalogueBlock, "A table of stars (or other targets) read once; a step names one row, and only the values it reads enter its key.", paramsOf[catalogueAttrs]()},
	}
}

// paramsOf reads an engine block's attributes. The structs above are fixed, so an error
// cannot come from a user: TestEngineBlocksAreDescribed fails on it.
func paramsOf[C any]() []steps.Param {
	s, err := steps.SchemaOf[C]()
	if err != nil {
		return nil
	}
	return s.Params()
}

// bodySchemaOf is the HCL schema of an engine block.
func bodySchemaOf(params []steps.Param) *hcl.BodySchema {
	schema := &hcl.BodySchema{}
	for _, p := range params {
		schema.Attributes = append(schema.Attributes, hcl.AttributeSchema{Name: p.Name, Required: p.Required})
	}
	return schema
}
