package features

import (
	"bytes"
	"image/color"
	"image/png"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// ReadNPY reads back what WriteNPY writes, and names the file and the
// byte or field at fault otherwise.
func TestReadNPY(t *testing.T) {
	var buf bytes.Buffer
	data := []float32{1, -2.5, 3, 4, 5, 6}
	if err := WriteNPY(&buf, data, 3, 2); err != nil {
		t.Fatal(err)
	}
	good := buf.Bytes()
	got, shape, err := ReadNPY(good, "x.npy")
	if err != nil || len(shape) != 2 || shape[0] != 3 || shape[1] != 2 || len(got) != 6 || got[1] != -2.5 {
		t.Fatalf("round trip: %v %v %v", got, shape, err)
	}
	f64 := bytes.Replace(good, []byte("'<f4'"), []byte("'<f8'"), 1)
	cases := []struct {
		name string
		b    []byte
		want string
	}{
		{"no magic", []byte("hello world"), "no magic at byte 0"},
		{"float64", f64, "'<f4'"},
		{"short data", good[:len(good)-4], "needs 24 bytes"},
		{"version", append(append([]byte{}, good[:6]...), append([]byte{9, 0}, good[8:]...)...), "version 9.0"},
	}
	for _, c := range cases {
		_, _, err := ReadNPY(c.b, "x.npy")
		if err == nil || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), "x.npy") {
			t.Errorf("%s: err = %v, want …%s…", c.name, err, c.want)
		}
	}
}

func TestROCPNG(t *testing.T) {
	dir := t.TempDir()
	p := filepath.Join(dir, "m-roc.png")
	panels := []ROCPanel{{Title: "m · knn", MaxFPR: 0.1, Curves: []ROCCurve{
		{Label: "recorded", FPR: []float64{0, 0, 0.5, 1}, TPR: []float64{0, 0.5, 1, 1}},
		{Label: "expanded", FPR: []float64{0, 1}, TPR: []float64{0, 1}, Style: 1, Dashed: true},
	}}}
	if err := ROCPNG(p, panels); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(p)
	if err != nil {
		t.Fatal(err)
	}
	img, err := png.Decode(bytes.NewReader(b))
	if err != nil {
		t.Fatal(err)
	}
	// the dark trace of the first curve is drawn somewhere
	found := false
	r0, g0, b0, _ := color.NRGBAModel.Convert(rocTrace).RGBA()
	for y := img.Bounds().Min.Y; y < img.Bounds().Max.Y && !found; y++ {
		for x := img.Bounds().Min.X; x < img.Bounds().Max.X; x++ {
			r, g, bb, _ := img.At(x, y).RGBA()
			if r == r0 && g == g0 && bb == b0 {
				found = true
				break
			}
		}
	}
	if !found {
		t.Error("no pixel of the first curve's colour")
	}
	bad := []ROCPanel{{Curves: []ROCCurve{{Label: "x", FPR: []float64{0, 1.5}, TPR: []float64{0, 1}}}}}
	if err := ROCPNG(p, bad); err == nil || !strings.Contains(err.Error(), "outside the unit square") {
		t.Errorf("bad curve: %v", err)
	}
}

// The evaluation section shows its notes, tables (escaped) and pictures.
func TestReportEvaluationSection(t *testing.T) {
	out := reportOut(t, nil)
	if err := os.MkdirAll(filepath.Join(out, "evaluate"), 0o755); err != nil {
		t.Fatal(err)
	}
	pic := solidPNG(t, 4, 3, color.RGBA{R: 9, A: 255})
	if err := os.WriteFile(filepath.Join(out, "evaluate", "m-roc.png"), pic, 0o644); err != nil {
		t.Fatal(err)
	}
	d := ReportData{Out: out, Evaluation: &EvaluationSection{
		Notes:    []string{"read <this>"},
		Tables:   []ReportTable{{Title: "AUC", Header: []string{"machine", "auc"}, Rows: [][]string{{"m", "0.9 [0.8, 1.0]"}}, Note: "n"}},
		Pictures: []string{"evaluate/m-roc.png"},
	}}
	html := renderString(t, d)
	for _, want := range []string{"Detector evaluation", "read &lt;this&gt;", "<td>0.9 [0.8, 1.0]</td>", `width="4" height="3"`, "m-roc.png"} {
		if !strings.Contains(html, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	d.Evaluation.Pictures = []string{"evaluate/missing.png"}
	var buf bytes.Buffer
	if err := RenderReport(&buf, d); err == nil || !strings.Contains(err.Error(), "missing.png") {
		t.Errorf("missing picture: %v", err)
	}
	d.Evaluation = nil
	if strings.Contains(renderString(t, d), "Detector evaluation") {
		t.Error("a report without evaluation shows the section")
	}
}
