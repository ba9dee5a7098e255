package wavio

import "fmt"

// FormatError reports input that is not a well-formed WAV file: a bad RIFF
// header, an impossible fmt field, a chunk that runs past the end of the
// file before the data chunk.
type FormatError struct {
	Name   string // file name given to NewReader or Open
	Offset int64  // byte offset of the offending field in the file
	Field  string // e.g. "riff.id", "fmt.block_align", "data"
	Msg    string
}

func (e *FormatError) Error() string { return errorString(e.Name, e.Offset, e.Field, e.Msg) }

// UnsupportedError reports a well-formed WAV file that uses a feature this
// package does not decode: a compressed or companded format tag, an unknown
// SubFormat GUID, an unusual sample width, RIFX or RF64 containers.
type UnsupportedError struct {
	Name   string
	Offset int64
	Field  string
	Msg    string
}

func (e *UnsupportedError) Error() string { return errorString(e.Name, e.Offset, e.Field, e.Msg) }

func errorString(name string, off int64, field, msg string) string {
	if name == "" {
		return fmt.Sprintf("wavio: offset %d: %s: %s", off, field, msg)
	}
	return fmt.Sprintf("wavio: %s: offset %d: %s: %s", name, off, field, msg)
}

// Format tags from the Microsoft mmreg.h registry (from memory); only the
// names are used, in error messages.
var tagNames = map[uint16]string{
	0x0000: "unknown",
	0x0001: "PCM",
	0x0002: "MS ADPCM",
	0x0003: "IEEE float",
	0x0006: "A-law",
	0x0007: "µ-law",
	0x0011: "IMA ADPCM",
	0x0022: "TrueSpeech",
	0x0031: "GSM 6.10",
	0x0040: "G.721 ADPCM",
	0x0050: "MPEG",
	0x0055: "MPEG layer 3",
	0x0092: "Dolby AC3 SPDIF",
	0x0161: "WMA",
	0x2000: "AC3",
	0xFFFE: "extensible",
}

func tagName(tag uint16) string {
	if s, ok := tagNames[tag]; ok {
		return s
	}
	return "unregistered"
}
