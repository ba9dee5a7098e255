package main

import (
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"sort"

	"thrum/machine/pool"
	"thrum/machine/wavio"
)

type wavioEncoding = wavio.Encoding

func parseEncoding(s string) (wavio.Encoding, error) {
	switch s {
	case "", "pcm16":
		return wavio.PCM16, nil
	case "pcm24":
		return wavio.PCM24, nil
	case "float32":
		return wavio.Float32, nil
	}
	return 0, fmt.Errorf("encoding %q is not one of pcm16, pcm24, float32", s)
}

func writeJSONLine(w io.Writer, v any) {
	b, err := json.Marshal(v)
	if err != nil {
		fmt.Fprintf(w, "{\"event\":\"error\",\"error\":%q}\n", err.Error())
		return
	}
	fmt.Fprintf(w, "%s\n", b)
}

func sortedStrings(s []string) []string {
	sort.Strings(s)
	return s
}

// isFailedFiles reports whether err says that some input files of a folder
// batch failed while the others were processed.
func isFailedFiles(err error) bool {
	var f *pool.Failed
	return errors.As(err, &f)
}

// failedFiles turns the failed files of a folder batch into a problems
// error (exit code 3): the batch finished, and each bad file is named.
func failedFiles(err error) error {
	if err == nil {
		return nil
	}
	return &problemsError{err.Error()}
}
