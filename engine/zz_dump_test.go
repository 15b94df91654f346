package engine

import (
	"context"
	"encoding/json"
	"os"
	"path/filepath"
	"testing"

	"bellcheck/engine/model"
)

func TestZZDumpRef(t *testing.T) {
	files, _ := filepath.Glob("../testdata/reference/*.txt")
	more, _ := filepath.Glob("../testdata/reference/bench/*.txt")
	out := map[string]any{}
	for _, f := range append(files, more...) {
		src, _ := os.ReadFile(f)
		m, err := model.Parse(string(src))
		if err != nil {
			continue
		}
		res, err := Analyse(context.Background(), m, Options{Plots: true}, nil)
		if err != nil {
			out[f] = err.Error()
			continue
		}
		res.Timing = Timing{}
		out[f] = res
	}
	b, _ := json.Marshal(out)
	os.WriteFile(os.Getenv("ZZOUT"), b, 0o644)
}
