package features

import (
	"bytes"
	"context"
	"encoding/base64"
	"html"
	"image"
	"image/color"
	"image/png"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"regexp"
	"slices"
	"strings"
	"testing"
	"time"
)

// solidPNG encodes a w×h picture of one colour.
func solidPNG(t *testing.T, w, h int, c color.RGBA) []byte {
	t.Helper()
	img := image.NewRGBA(image.Rect(0, 0, w, h))
	for y := 0; y < h; y++ {
		for x := 0; x < w; x++ {
			img.SetRGBA(x, y, c)
		}
	}
	var buf bytes.Buffer
	if err := png.Encode(&buf, img); err != nil {
		t.Fatal(err)
	}
	return buf.Bytes()
}

// reportOut makes OUT/features/pictures holding files and returns OUT.
func reportOut(t *testing.T, files map[string][]byte) string {
	t.Helper()
	out := t.TempDir()
	dir := filepath.Join(out, Dir, "pictures")
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	for name, data := range files {
		if err := os.WriteFile(filepath.Join(dir, name), data, 0o644); err != nil {
			t.Fatal(err)
		}
	}
	return out
}

func renderString(t *testing.T, d ReportData) string {
	t.Helper()
	var buf bytes.Buffer
	if err := RenderReport(&buf, d); err != nil {
		t.Fatal(err)
	}
	return buf.String()
}

var dataURI = regexp.MustCompile(`src="data:image/png;base64,([^"]*)"`)

// embedded decodes the data URIs in one piece of HTML, as a browser does:
// the attribute's character references first (html/template writes "+" as
// "&#43;"), then base64.
func embedded(t *testing.T, s string) [][]byte {
	t.Helper()
	var out [][]byte
	for _, m := range dataURI.FindAllStringSubmatch(s, -1) {
		b, err := base64.StdEncoding.DecodeString(html.UnescapeString(m[1]))
		if err != nil {
			t.Fatalf("data URI does not decode: %v", err)
		}
		out = append(out, b)
	}
	return out
}

// machineSections splits the HTML into the machine sections, in order.
func machineSections(s string) []string {
	parts := strings.Split(s, `<section class="machine">`)[1:]
	for i, p := range parts {
		parts[i], _, _ = strings.Cut(p, "</section>")
	}
	return parts
}

func twoMachines(out string) ReportData {
	return ReportData{
		Title: `Plant "A" & <Co>`, Plant: "plant.toml", Out: out, WallSeconds: 83.4, Audit: "clean",
		Machines: []MachineReport{
			{
				ID: "<b>", Clips: 12, Recorded: 12, Augmented: 48,
				Rejected: map[string]int{"clipping": 3, "<too quiet>": 1},
				Faults:   map[string]int{"bpfo": 5, "misalignment": 2},
				Splits:   map[string]int{"excluded": 4, "test": 9, "eval": 8, "train": 41},
			},
			{ID: "pump", Clips: 3, Recorded: 3, Augmented: 6, Splits: map[string]int{"train": 9}},
		},
	}
}

func TestWriteReport(t *testing.T) {
	bPNG := solidPNG(t, 4, 3, color.RGBA{200, 30, 30, 255})
	pumpPNG := solidPNG(t, 5, 2, color.RGBA{30, 30, 200, 255})
	out := reportOut(t, map[string][]byte{
		"<b>-spectrogram.png":    bPNG,
		"pump-envelope-bpfo.png": pumpPNG,
		"fan-spectrogram.png":    solidPNG(t, 2, 2, color.RGBA{0, 0, 0, 255}), // no such machine
		"pump-notes.txt":         []byte("not a picture"),
	})
	path := filepath.Join(out, "report.html")
	d := twoMachines(out)
	if err := WriteReport(path, d); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	s := string(raw)

	if !strings.HasPrefix(s, "<!DOCTYPE html>\n<html") || !strings.HasSuffix(s, "</html>\n") {
		t.Errorf("not a complete HTML document: starts %q", s[:min(len(s), 40)])
	}
	for _, tag := range []string{"html", "head", "header", "body", "main", "table", "tr", "section", "figure", "style", "dl"} {
		o := len(regexp.MustCompile(`<`+tag+`[\s>]`).FindAllStringIndex(s, -1))
		if c := strings.Count(s, "</"+tag+">"); o == 0 || o != c {
			t.Errorf("<%s>: %d opened, %d closed", tag, o, c)
		}
	}
	if n := strings.Count(s, "<table>"); n != len(d.Machines) {
		t.Errorf("%d tables, want one per machine (%d)", n, len(d.Machines))
	}
	// Self-contained: no scripts, no external references.
	for _, bad := range []string{"<script", "http://", "https://", "<link", "@import", "url("} {
		if strings.Contains(s, bad) {
			t.Errorf("report contains %q", bad)
		}
	}
	// Escaping: the machine id and the title never appear raw.
	for _, raw := range []string{"<b>", "<Co>", "<too quiet>", `"A"`} {
		if strings.Contains(s, raw) {
			t.Errorf("raw %q in the report", raw)
		}
	}
	for _, esc := range []string{"Machine &lt;b&gt;", "Plant &#34;A&#34; &amp; &lt;Co&gt;", "&lt;too quiet&gt;"} {
		if !strings.Contains(s, esc) {
			t.Errorf("escaped %q missing", esc)
		}
	}
	if !strings.Contains(s, `class="audit clean">clean<`) {
		t.Error("clean audit not shown as clean")
	}
	if !strings.Contains(s, "1 min 23 s") {
		t.Error("wall time missing")
	}
	if !strings.Contains(s, "85 dB(A)") {
		t.Error("safety note missing")
	}

	secs := machineSections(s)
	if len(secs) != 2 {
		t.Fatalf("%d machine sections, want 2", len(secs))
	}
	for i, c := range []struct {
		want     [][]byte
		w, h     string
		captions []string
		rows     []string
	}{
		{
			want: [][]byte{bPNG}, w: "4", h: "3",
			captions: []string{"Log-mel spectrogram", "&lt;b&gt;-spectrogram.png"},
			rows: []string{
				"<td>cut from recordings</td><td class=\"n\">12</td>",
				"<td>augmented</td><td class=\"n\">48</td>",
				"<td>clipping</td><td class=\"n\">3</td>",
				"<td>bpfo</td><td class=\"n\">5</td>",
				"<td>train</td><td class=\"n\">41</td>",
				"<td>excluded</td><td class=\"n\">4</td>",
			},
		},
		{
			want: [][]byte{pumpPNG}, w: "5", h: "2",
			captions: []string{"synthetic bpfo fault cue", "pump-envelope-bpfo.png"},
			rows: []string{
				"<th scope=\"row\">Rejected</th><td class=\"none\">none</td>",
				"<th scope=\"row\">Fault cues</th><td class=\"none\">none</td>",
				"<td>train</td><td class=\"n\">9</td>",
			},
		},
	} {
		got := embedded(t, secs[i])
		if len(got) != len(c.want) {
			t.Errorf("machine %d: %d pictures, want %d", i, len(got), len(c.want))
			continue
		}
		for k := range got {
			if !bytes.Equal(got[k], c.want[k]) {
				t.Errorf("machine %d picture %d: data URI does not decode to the PNG file", i, k)
			}
		}
		if !strings.Contains(secs[i], `width="`+c.w+`" height="`+c.h+`"`) {
			t.Errorf("machine %d: picture size attributes missing", i)
		}
		for _, want := range append(c.captions, c.rows...) {
			if !strings.Contains(secs[i], want) {
				t.Errorf("machine %d: %q missing", i, want)
			}
		}
	}
	// Splits in the usual order, whatever the map order.
	order := []int{}
	for _, sp := range []string{"<td>train<", "<td>eval<", "<td>test<", "<td>excluded<"} {
		order = append(order, strings.Index(secs[0], sp))
	}
	for k := 1; k < len(order); k++ {
		if order[k-1] < 0 || order[k] <= order[k-1] {
			t.Errorf("split rows out of order: %v", order)
			break
		}
	}
	if len(embedded(t, s)) != 2 {
		t.Errorf("%d pictures in all, want 2 (fan has no machine)", len(embedded(t, s)))
	}

	// Same inputs, same bytes; and no temporary file left behind.
	again := filepath.Join(out, "again.html")
	if err := WriteReport(again, d); err != nil {
		t.Fatal(err)
	}
	if raw2, _ := os.ReadFile(again); !bytes.Equal(raw, raw2) {
		t.Error("two renders of the same data differ")
	}
	ents, _ := os.ReadDir(out)
	for _, e := range ents {
		if n := e.Name(); n != "report.html" && n != "again.html" && n != Dir {
			t.Errorf("stray file %q after writing", n)
		}
	}
}

func TestReportAudit(t *testing.T) {
	for _, c := range []struct {
		name       string
		audit      string
		violations []string
		class      string
		shown      string
	}{
		{"clean", "clean", nil, "clean", "clean"},
		{"violations", "2 violation(s)", []string{"group g1 in train and test", "<script>alert(1)</script>"}, "fail", "2 violation(s)"},
		{"clean with violations", "clean", []string{"x"}, "fail", "1 violation(s)"},
		{"violations without a verdict", "", []string{"x", "y", "z"}, "fail", "3 violation(s)"},
		{"not run", "", nil, "unknown", "not run"},
	} {
		t.Run(c.name, func(t *testing.T) {
			d := ReportData{Out: t.TempDir(), Audit: c.audit, Violations: c.violations}
			s := renderString(t, d)
			if !strings.Contains(s, `class="audit `+c.class+`">`+c.shown+"<") {
				t.Errorf("audit badge: want class %q showing %q", c.class, c.shown)
			}
			if got := strings.Count(s, "<li>"); got != len(c.violations) {
				t.Errorf("%d violations listed, want %d", got, len(c.violations))
			}
			if strings.Contains(s, "<script") {
				t.Error("violation text not escaped")
			}
			if slices.Contains(c.violations, "<script>alert(1)</script>") && !strings.Contains(s, "<li>&lt;script&gt;alert(1)&lt;/script&gt;</li>") {
				t.Error("escaped violation missing")
			}
		})
	}
}

func TestReportPictures(t *testing.T) {
	a := solidPNG(t, 1, 1, color.RGBA{1, 2, 3, 255})
	b := solidPNG(t, 2, 1, color.RGBA{4, 5, 6, 255})
	c := solidPNG(t, 1, 2, color.RGBA{7, 8, 9, 255})
	for _, tc := range []struct {
		name  string
		files map[string][]byte
		ids   []string
		want  [][][]byte // per machine, in name order
	}{
		{
			name:  "longest id wins",
			files: map[string][]byte{"pump-spectrogram.png": a, "pump-2-spectrogram.png": b, "pump-2-envelope-bpfi.png": c},
			ids:   []string{"pump", "pump-2"},
			want:  [][][]byte{{a}, {c, b}},
		},
		{
			name:  "shorter id alone takes both",
			files: map[string][]byte{"pump-spectrogram.png": a, "pump-2-spectrogram.png": b},
			ids:   []string{"pump"},
			want:  [][][]byte{{b, a}},
		},
		{
			name:  "prefix needs the dash",
			files: map[string][]byte{"pumps-spectrogram.png": a, "fan.png": b},
			ids:   []string{"pump", "fan"},
			want:  [][][]byte{nil, nil},
		},
		{name: "no pictures folder", ids: []string{"pump"}, want: [][][]byte{nil}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			out := t.TempDir()
			if tc.files != nil {
				out = reportOut(t, tc.files)
			}
			d := ReportData{Out: out, Audit: "clean"}
			for _, id := range tc.ids {
				d.Machines = append(d.Machines, MachineReport{ID: id})
			}
			secs := machineSections(renderString(t, d))
			if len(secs) != len(tc.ids) {
				t.Fatalf("%d sections, want %d", len(secs), len(tc.ids))
			}
			for i := range secs {
				got := embedded(t, secs[i])
				if len(got) != len(tc.want[i]) {
					t.Errorf("machine %s: %d pictures, want %d", tc.ids[i], len(got), len(tc.want[i]))
					continue
				}
				for k := range got {
					if !bytes.Equal(got[k], tc.want[i][k]) {
						t.Errorf("machine %s picture %d: wrong bytes", tc.ids[i], k)
					}
				}
			}
		})
	}
}

func TestReportBadPicture(t *testing.T) {
	good := solidPNG(t, 1, 1, color.RGBA{1, 2, 3, 255})
	for _, c := range []struct {
		name string
		data []byte
	}{
		{"not a png", []byte("GIF89a....")},
		{"truncated", good[:12]},
		{"empty", nil},
	} {
		t.Run(c.name, func(t *testing.T) {
			out := reportOut(t, map[string][]byte{"pump-spectrogram.png": c.data})
			path := filepath.Join(out, "report.html")
			err := WriteReport(path, ReportData{Out: out, Machines: []MachineReport{{ID: "pump"}}})
			if err == nil || !strings.HasPrefix(err.Error(), "features: report: ") {
				t.Fatalf("err = %v, want a features: report error", err)
			}
			if _, err := os.Stat(path); !os.IsNotExist(err) {
				t.Error("report written despite the error")
			}
		})
	}
}

func TestWallTime(t *testing.T) {
	for _, c := range []struct {
		s    float64
		want string
	}{
		{0, "0.0 s"},
		{12.34, "12.3 s"},
		{83.4, "1 min 23 s"},
		{3599, "59 min 59 s"},
		{3725, "1 h 2 min"},
		{-1, "unknown"},
		{math.NaN(), "unknown"},
		{math.Inf(1), "unknown"},
	} {
		if got := wallTime(c.s); got != c.want {
			t.Errorf("wallTime(%v) = %q, want %q", c.s, got, c.want)
		}
	}
}

// TestReportChromium renders a report in headless Chromium, when it is
// installed, and checks that the screenshot shows the green audit badge and
// the embedded picture.
func TestReportChromium(t *testing.T) {
	const bin = "/usr/bin/chromium"
	if _, err := os.Stat(bin); err != nil {
		t.Skip("no " + bin)
	}
	if testing.Short() {
		t.Skip("starts a browser")
	}
	pic := color.RGBA{200, 40, 160, 255}
	out := reportOut(t, map[string][]byte{
		"<b>-spectrogram.png":    solidPNG(t, 320, 120, pic),
		"pump-envelope-bpfo.png": solidPNG(t, 200, 80, color.RGBA{40, 120, 200, 255}),
	})
	report := filepath.Join(out, "report.html")
	if err := WriteReport(report, twoMachines(out)); err != nil {
		t.Fatal(err)
	}
	tmp := t.TempDir()
	shot := filepath.Join(tmp, "shot.png")
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	cmd := exec.CommandContext(ctx, bin, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
		"--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync",
		"--user-data-dir="+filepath.Join(tmp, "profile"), "--screenshot="+shot, "--window-size=1200,1600",
		"file://"+report)
	if msg, err := cmd.CombinedOutput(); err != nil {
		t.Fatalf("chromium: %v\n%s", err, msg)
	}
	if dst := os.Getenv("THRUM_REPORT_SHOT"); dst != "" { // keep the screenshot to look at
		if b, err := os.ReadFile(shot); err == nil {
			_ = os.WriteFile(dst, b, 0o644)
		}
	}
	f, err := os.Open(shot)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	img, err := png.Decode(f)
	if err != nil {
		t.Fatalf("screenshot: %v", err)
	}
	r := img.Bounds()
	if r.Dx() < 600 || r.Dy() < 600 {
		t.Errorf("screenshot is %v, want about 1200×1600", r)
	}
	near := func(c color.Color, want color.RGBA) bool {
		const tol = 24 << 8
		cr, cg, cb, _ := c.RGBA()
		d := func(a uint32, b uint8) bool { return math.Abs(float64(a)-float64(uint32(b)<<8|uint32(b))) <= tol }
		return d(cr, want.R) && d(cg, want.G) && d(cb, want.B)
	}
	first := img.At(r.Min.X, r.Min.Y)
	single := true
	green, picture := 0, 0
	for y := r.Min.Y; y < r.Max.Y; y++ {
		for x := r.Min.X; x < r.Max.X; x++ {
			c := img.At(x, y)
			if single && c != first {
				single = false
			}
			if near(c, color.RGBA{0x1e, 0x8e, 0x3e, 255}) { // the clean audit badge
				green++
			}
			if near(c, pic) {
				picture++
			}
		}
	}
	if single {
		t.Fatal("screenshot is a single colour")
	}
	if green < 200 {
		t.Errorf("%d pixels of the green audit badge, want a visible badge", green)
	}
	if picture < 320*120/2 {
		t.Errorf("%d pixels of the embedded picture's colour, want most of its 320×120", picture)
	}
}

// The report shows what a reader needs to judge the dataset: violations
// grouped by rule and machine pair (with their count), the split's
// warnings, the hold-out conditions, the skipped and excluded files and a
// per-condition table of each split's counts.
func TestReportDatasetSections(t *testing.T) {
	d := ReportData{
		Out: t.TempDir(), Audit: "3 violation(s)",
		Violations: []string{"v1", "v2", "v3"},
		ViolationGroups: []ViolationGroup{
			{Rule: "no-near-duplicate-across-splits", Machines: "conveyor-c1 ↔ pump-p1", Lines: []string{"v1", "v2"}},
			{Rule: "group-in-one-split", Machines: "pump-p1", Lines: []string{"v3"}},
		},
		Warnings: []string{`machine "fan-f1": no real anomalous recording in test`},
		HoldOut:  []string{"fan-f1/low"},
		Skipped:  []string{"pump-p1/duty/bad.wav: unreadable: not a RIFF file"},
		Excluded: []ExcludedFile{{"pump-p1/duty/augmented/take-02-c0000-v00.wav", "derived-of-eval"}, {"pump-p1/duty/recorded/take-05-c0003.wav", "guard-gap"}},
		Conditions: []ConditionCounts{
			{Machine: "fan-f1", Condition: "high", Splits: map[string]OriginCounts{"train": {Recorded: 7, Augmented: 21, Faults: 14}, "eval": {Recorded: 3, Anomalous: 2}}},
			{Machine: "fan-f1", Condition: "low", HoldOut: true, Splits: map[string]OriginCounts{"test": {Recorded: 4}}},
		},
	}
	got := renderString(t, d)
	for _, want := range []string{
		"no-near-duplicate-across-splits</code> — conveyor-c1 ↔ pump-p1: 2 violation(s)",
		"group-in-one-split</code> — pump-p1: 1 violation(s)",
		"Split warnings", html.EscapeString(d.Warnings[0]),
		"<code>fan-f1/low</code>",
		"pump-p1/duty/bad.wav: unreadable",
		"derived-of-eval 1; guard-gap 1",
		"<td>fan-f1</td><td>high</td><td>train</td><td class=\"n\">7</td><td class=\"n\">0</td><td class=\"n\">21</td><td class=\"n\">14</td>",
		"<td>fan-f1</td><td>high</td><td>eval</td><td class=\"n\">3</td><td class=\"n\">2</td>",
		"<td>low (hold-out)</td><td>test</td>",
	} {
		if !strings.Contains(got, want) {
			t.Errorf("report lacks %q", want)
		}
	}
	if strings.Contains(got, `<ul class="violations">`) {
		t.Error("grouped violations also listed flat")
	}
}
