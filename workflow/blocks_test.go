package workflow

import "testing"

func TestEngineBlocksAreDescribed(t *testing.T) {
	// Load decodes the analysis and catalogue blocks against these descriptions: a
	// malformed tag would leave a block with no attributes at all.
	want := map[string][]string{settingsBlock: {"seed", "store", "output"}, catalogueBlock: {"file", "id", "columns"}}
	for _, b := range EngineBlocks() {
		var got []string
		for _, p := range b.Params {
			got = append(got, p.Name)
		}
		if len(got) != len(want[b.Name]) {
			t.Fatalf("%s block: attributes %v, want %v", b.Name, got, want[b.Name])
		}
		for i := range got {
			if got[i] != want[b.Name][i] {
				t.Errorf("%s block: attributes %v, want %v", b.Name, got, want[b.Name])
			}
		}
	}
}
