// Package wavio reads and writes RIFF/WAVE recordings as float64 (or
// float32) samples.
//
// # Reading
//
// NewReader parses the header of any io.Reader (no seeking) up to the data
// chunk; ReadFrames then decodes interleaved frames in blocks, so a long
// recording is never held as one integer buffer. Open and ReadFile are the
// file conveniences.
//
// Decoded formats: integer PCM in 8-bit (unsigned), 16-, 24- and 32-bit
// (signed, little-endian) containers, IEEE float of 32 and 64 bits, each
// either as a plain header (format tag 1 or 3; fmt chunk of 16, 18 or more
// bytes) or as WAVE_FORMAT_EXTENSIBLE (tag 0xFFFE, 40-byte fmt) with the
// PCM or IEEE-float SubFormat GUID; any number of channels.
//
// # Sample scales
//
// A signed PCM sample s in a b-bit container decodes exactly as
//
//	x = s / 2^(b-1)            so x ∈ [-1, 1 - 2^(1-b)]
//
// and an 8-bit sample u (unsigned, offset binary) as x = (u - 128) / 128.
// Full-scale positive is therefore 1 - 2^(1-b), not 1. When an extensible
// header gives fewer valid bits v than the container width b, the samples
// are left-justified: the low b - v padding bits are cleared and the scale
// stays 2^(b-1). Float samples are passed through unchanged, including
// values beyond ±1, NaN and ±Inf. ReadFrames32 returns the same values
// rounded to float32, which is exact for PCM of up to 24 bits.
//
// # Chunks and clamping
//
// Chunks are walked by their sizes with the pad byte after every odd-sized
// chunk. Chunks before the data (LIST, JUNK, bext, fact, unknown ids) are
// skipped; chunks after the data are never read. Damage that still leaves
// the samples usable is clamped and recorded in Warnings, not returned as
// an error:
//
//   - a data size of 0xFFFFFFFF (a recorder that never patched its header)
//     or one past the end of the file is clamped to the bytes present;
//     with an unknown stream size the data is read to the end of the stream;
//   - a trailing partial frame is dropped;
//   - a byte rate that disagrees with sample rate × block align is ignored;
//   - an extensible header with 0 valid bits is read as the full container.
//
// # Errors
//
// A *FormatError means the input is not a well-formed WAV file (bad RIFF
// id, fmt field out of range, block align inconsistent with channels and
// width, data before fmt, a chunk running past the end before the data).
// An *UnsupportedError means the file is valid but uses something this
// package does not decode. Both carry the file name, the byte offset of the
// offending field and the field's name, e.g.
//
//	wavio: pump.wav: offset 20: fmt.audio_format: unsupported format tag 6 (A-law)
//
// Errors from the underlying reader are wrapped with the offset and
// returned as they happen; they are not sticky, and frames decoded before
// the error are still delivered.
//
// Unsupported: companded and compressed format tags (A-law 6, µ-law 7, MS
// ADPCM 2, IMA ADPCM 0x11, GSM, MPEG and the rest), extensible SubFormat
// GUIDs other than PCM and IEEE float, float widths other than 32 and 64
// bits, PCM wider than 32 bits, big-endian RIFX, and RF64/BW64 files over
// 4 GiB.
//
// # Writing
//
// Encode writes a complete file in one buffered pass: PCM16 and PCM24 as
// format tag 1 with a 16-byte fmt chunk, Float32 as tag 3 with an 18-byte
// fmt (cbSize 0) and a fact chunk holding the frame count. PCM samples are
// scaled by 2^(b-1), rounded to the nearest integer with ties to even, and
// clamped to [-2^(b-1), 2^(b-1) - 1], so +1.0 is written as 2^(b-1) - 1
// and the decode of any written file re-encodes to the same bytes. NaN is
// written as 0. Float32 samples are rounded to float32 and not clamped. An
// odd-sized data chunk is followed by its pad byte. Files are limited to
// the 4 GiB of a RIFF size field.
//
// WriteFile writes to a temporary file in the destination directory, syncs
// it, and renames it into place, so the path holds either its old contents
// or the complete new file; the temporary file is removed on any error.
//
// Readers are not safe for concurrent use; Encode and WriteFile are.
package wavio
