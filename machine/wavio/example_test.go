package wavio_test

import (
	"bytes"
	"fmt"
	"io"

	"thrum/machine/wavio"
)

func Example() {
	var buf bytes.Buffer
	// Two stereo frames; 1.0 clamps to the largest 16-bit code.
	if err := wavio.Encode(&buf, []float64{0.5, -0.25, 1, -1}, 16000, 2, wavio.PCM16); err != nil {
		panic(err)
	}
	r, err := wavio.NewReader(&buf, "example.wav", int64(buf.Len()))
	if err != nil {
		panic(err)
	}
	fmt.Printf("%+v, %d frames\n", r.Format(), r.Frames())
	dst := make([]float64, 2)
	for {
		n, err := r.ReadFrames(dst)
		if err == io.EOF {
			break
		}
		fmt.Println(n, dst)
	}
	// Output:
	// {SampleRate:16000 Channels:2 BitDepth:16 ValidBits:16 Float:false Extensible:false Codec:}, 2 frames
	// 1 [0.5 -0.25]
	// 1 [0.999969482421875 -1]
}

func ExampleUnsupportedError() {
	// A header with format tag 6 (A-law) at offset 20.
	hdr := []byte("RIFF\x24\x00\x00\x00WAVEfmt \x10\x00\x00\x00\x06\x00\x01\x00\x40\x1f\x00\x00\x40\x1f\x00\x00\x01\x00\x08\x00data\x00\x00\x00\x00")
	_, err := wavio.NewReader(bytes.NewReader(hdr), "pump.wav", int64(len(hdr)))
	_, unsupported := err.(*wavio.UnsupportedError)
	fmt.Println(unsupported, err)
	// Output:
	// true wavio: pump.wav: offset 20: fmt.audio_format: unsupported format tag 6 (A-law)
}
