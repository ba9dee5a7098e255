//go:build ignore

// Command gen rebuilds the WAV fixtures in testdata/wav and the SoX decode
// stored beside each one. Run it from testdata/wav:
//
//	go run gen/main.go
//
// It needs sox on PATH. The sox-made files come from the commands in
// soxFixtures; the hand-built files are written byte by byte below, so that
// each exercises one feature of the RIFF layout. Every file SoX can decode
// gets X.f64: SoX's own decode as raw little-endian float64
// (sox X.wav -L -t f64 X.f64).
package main

import (
	"bytes"
	"encoding/binary"

	"log"
	"math"
	"math/rand/v2"
	"os"
	"os/exec"
	"path/filepath"
	"strings"
)

// soxFixtures: file name → sox arguments after the global options "-R -D"
// (repeatable, no dither). The rate and channel count are given to the
// null input (-n) so that synth runs at the output rate and no resampler
// or channel mixer is involved.
var soxFixtures = []struct {
	name string
	args string
}{
	{"s16_mono.wav", "-r 16000 -c 1 -n -b 16 -e signed-integer -t wavpcm s16_mono.wav synth 0.1 sine 440 gain -3"},
	{"s16_stereo.wav", "-r 16000 -c 2 -n -b 16 -e signed-integer -t wavpcm s16_stereo.wav synth 0.1 sine 440 sine 660 gain -3"},
	{"u8_odd.wav", "-r 8000 -c 1 -n -b 8 -e unsigned-integer -t wavpcm u8_odd.wav synth 1001s sine 300 gain -1"},
	{"s24_plain.wav", "-r 16000 -c 1 -n -b 24 -e signed-integer -t wavpcm s24_plain.wav synth 1601s sine 1000 gain -1"},
	{"s24_ext.wav", "-r 16000 -c 2 -n -b 24 -e signed-integer -t wav s24_ext.wav synth 0.05 sine 500 sine 700 gain -2"},
	{"s32_ext.wav", "-r 16000 -c 1 -n -b 32 -e signed-integer -t wav s32_ext.wav synth 0.05 sine 900 gain -2"},
	{"f32.wav", "-r 16000 -c 2 -n -b 32 -e floating-point -t wav f32.wav synth 0.05 sine 440 sine 3000 gain -2"},
	{"f64.wav", "-r 16000 -c 1 -n -b 64 -e floating-point -t wav f64.wav synth 0.05 sine 250 gain -2"},
	{"s16_4ch.wav", "-r 16000 -c 4 -n -b 16 -e signed-integer -t wav s16_4ch.wav synth 0.05 sine 200 sine 300 sine 400 sine 500 gain -6"},
	{"alaw.wav", "-r 8000 -c 1 -n -e a-law -t wav alaw.wav synth 0.05 sine 440 gain -3"},
	{"ulaw.wav", "-r 8000 -c 1 -n -e u-law -t wav ulaw.wav synth 0.05 sine 440 gain -3"},
	{"msadpcm.wav", "-r 8000 -c 1 -n -e ms-adpcm -t wav msadpcm.wav synth 0.05 sine 440 gain -3"},
}

// noOracle are the files SoX is not asked to decode: the corrupt ones, the
// ones this project does not decode, and one SoX cannot read.
// ext_s24_20bit.wav is decoded by the generator itself, because SoX 14.4.2
// refuses extensible files whose valid bits are fewer than the container
// ("WAVE file fmt with padded samples is not supported yet").
var noOracle = map[string]bool{"garbage.wav": true, "corrupt_fmt.wav": true, "ext_s24_20bit.wav": true,
	"alaw.wav": true, "ulaw.wav": true, "msadpcm.wav": true}

func main() {
	for _, f := range soxFixtures {
		run("sox", append([]string{"-R", "-D"}, strings.Fields(f.args)...)...)
	}
	hand := map[string][]byte{
		"list_before_data.wav":      listBeforeData(),
		"list_after_data.wav":       listAfterData(),
		"odd_chunk_before_data.wav": oddChunkBeforeData(),
		"fmt18_s16.wav":             fmt18(),
		"data_ffffffff.wav":         dataUnknownSize(),
		"truncated.wav":             truncated(),
		"ext_f32.wav":               extFloat(),
		"ext_s24_20bit.wav":         ext20in24(),
		"clipped_s16.wav":           clipped(),
		"garbage.wav":               garbage(),
		"corrupt_fmt.wav":           corruptFmt(),
	}
	for name, b := range hand {
		if err := os.WriteFile(name, b, 0o644); err != nil {
			log.Fatal(err)
		}
	}
	// The generator's own decode of the 20-in-24 file: q / 2^23 for each
	// quantised value q.
	var o []byte
	for _, v := range tone(500, 2, 16000) {
		q := int32(math.Round(v*8388607)) &^ 0xF
		o = le.AppendUint64(o, math.Float64bits(float64(q)/8388608))
	}
	if err := os.WriteFile("ext_s24_20bit.f64", o, 0o644); err != nil {
		log.Fatal(err)
	}
	names, _ := filepath.Glob("*.wav")
	for _, n := range names {
		if noOracle[n] {
			continue
		}
		run("sox", n, "-L", "-t", "f64", strings.TrimSuffix(n, ".wav")+".f64")
	}
}

func run(name string, args ...string) {
	cmd := exec.Command(name, args...)
	cmd.Stderr = os.Stderr
	if err := cmd.Run(); err != nil {
		log.Fatalf("%s %s: %v", name, strings.Join(args, " "), err)
	}
}

var le = binary.LittleEndian

// tone is a deterministic two-sine test signal in [-0.75, 0.75].
func tone(frames, channels int, rate float64) []float64 {
	x := make([]float64, frames*channels)
	for i := range frames {
		t := float64(i) / rate
		for c := range channels {
			f := 440 * float64(c+1)
			x[i*channels+c] = 0.5*math.Sin(2*math.Pi*f*t) + 0.25*math.Sin(2*math.Pi*1234*t+float64(c))
		}
	}
	return x
}

func chunk(id string, body []byte) []byte {
	b := append([]byte(id), le.AppendUint32(nil, uint32(len(body)))...)
	b = append(b, body...)
	if len(body)%2 == 1 {
		b = append(b, 0)
	}
	return b
}

func riff(chunks ...[]byte) []byte {
	body := []byte("WAVE")
	for _, c := range chunks {
		body = append(body, c...)
	}
	return append(append([]byte("RIFF"), le.AppendUint32(nil, uint32(len(body)))...), body...)
}

func fmtPCM(tag uint16, channels, rate, bits int) []byte {
	ba := channels * bits / 8
	b := le.AppendUint16(nil, tag)
	b = le.AppendUint16(b, uint16(channels))
	b = le.AppendUint32(b, uint32(rate))
	b = le.AppendUint32(b, uint32(rate*ba))
	b = le.AppendUint16(b, uint16(ba))
	return le.AppendUint16(b, uint16(bits))
}

// fmtExt is a 40-byte WAVE_FORMAT_EXTENSIBLE body with the SubFormat GUID
// for the given tag.
func fmtExt(sub uint16, channels, rate, bits, valid int, mask uint32) []byte {
	b := fmtPCM(0xFFFE, channels, rate, bits)
	b = le.AppendUint16(b, 22)
	b = le.AppendUint16(b, uint16(valid))
	b = le.AppendUint32(b, mask)
	b = le.AppendUint16(b, sub)
	return append(b, 0x00, 0x00, 0x00, 0x00, 0x10, 0x00, 0x80, 0x00, 0x00, 0xAA, 0x00, 0x38, 0x9B, 0x71)
}

func s16(x []float64) []byte {
	var b []byte
	for _, v := range x {
		b = le.AppendUint16(b, uint16(int16(math.Round(v*32767))))
	}
	return b
}

// s24 quantises to 24 bits with the low drop bits cleared.
func s24(x []float64, drop uint) []byte {
	var b []byte
	for _, v := range x {
		q := int32(math.Round(v*8388607)) &^ (1<<drop - 1)
		b = append(b, byte(q), byte(q>>8), byte(q>>16))
	}
	return b
}

func info(pairs ...string) []byte {
	b := []byte("INFO")
	for i := 0; i < len(pairs); i += 2 {
		b = append(b, chunk(pairs[i], append([]byte(pairs[i+1]), 0))...)
	}
	return chunk("LIST", b)
}

func listBeforeData() []byte {
	return riff(chunk("fmt ", fmtPCM(1, 1, 16000, 16)),
		info("INAM", "pump 3", "ICMT", "normal run"), // "pump 3\x00" is 7 bytes: padded
		chunk("data", s16(tone(800, 1, 16000))))
}

func listAfterData() []byte {
	// 801 mono 24-bit frames: 2403 data bytes, then the pad byte, then LIST.
	return riff(chunk("fmt ", fmtPCM(1, 1, 16000, 24)),
		chunk("data", s24(tone(801, 1, 16000), 0)),
		info("ISFT", "thrum fixture"))
}

func oddChunkBeforeData() []byte {
	bext := bytes.Repeat([]byte{'b'}, 603)
	return riff(chunk("bext", bext), chunk("JUNK", make([]byte, 4)),
		chunk("fmt ", fmtPCM(1, 2, 16000, 16)),
		chunk("abcd", []byte("seven!!")),
		chunk("data", s16(tone(400, 2, 16000))))
}

func fmt18() []byte {
	return riff(chunk("fmt ", le.AppendUint16(fmtPCM(1, 1, 16000, 16), 0)),
		chunk("data", s16(tone(500, 1, 16000))))
}

func dataUnknownSize() []byte {
	b := riff(chunk("fmt ", fmtPCM(1, 1, 16000, 16)), chunk("data", s16(tone(700, 1, 16000))))
	le.PutUint32(b[4:], 0xFFFFFFFF)
	le.PutUint32(b[40:], 0xFFFFFFFF)
	return b
}

// truncated says 800 stereo frames but stops 3 bytes into frame 500.
func truncated() []byte {
	b := riff(chunk("fmt ", fmtPCM(1, 2, 16000, 16)), chunk("data", s16(tone(800, 2, 16000))))
	return b[:44+500*4+3]
}

func extFloat() []byte {
	x := tone(600, 2, 16000)
	var d []byte
	for _, v := range x {
		d = le.AppendUint32(d, math.Float32bits(float32(v)))
	}
	fact := le.AppendUint32(nil, 600)
	return riff(chunk("fmt ", fmtExt(3, 2, 16000, 32, 32, 0x3)), chunk("fact", fact), chunk("data", d))
}

func ext20in24() []byte {
	return riff(chunk("fmt ", fmtExt(1, 2, 16000, 24, 20, 0x3)), chunk("data", s24(tone(500, 2, 16000), 4)))
}

// clipped holds runs at both integer limits and a sine clipped to them.
func clipped() []byte {
	var d []byte
	for i := range 800 {
		var q int16
		switch {
		case i < 50:
			q = 32767
		case i < 100:
			q = -32768
		default:
			v := 1.5 * math.Sin(2*math.Pi*100*float64(i)/16000) * 32768
			q = int16(max(-32768, min(32767, math.Round(v))))
		}
		d = le.AppendUint16(d, uint16(q))
	}
	return riff(chunk("fmt ", fmtPCM(1, 1, 16000, 16)), chunk("data", d))
}

func garbage() []byte {
	r := rand.New(rand.NewPCG(1, 2))
	b := make([]byte, 64)
	for i := range b {
		b[i] = byte(r.Uint32())
	}
	return b
}

// corruptFmt has a block align of 3 for 16-bit stereo.
func corruptFmt() []byte {
	f := fmtPCM(1, 2, 16000, 16)
	le.PutUint16(f[12:], 3)
	return riff(chunk("fmt ", f), chunk("data", s16(tone(100, 2, 16000))))
}
