// Stacked arrays: every clip of a split of a machine in one .npy.

package features

import (
	"encoding/binary"
	"fmt"
	"math"
	"os"
	"path"
	"path/filepath"

	"thrum/machine"
)

// writeStacks streams each split's feature arrays, read back from their
// .npy files in index order, into one (rows, bands) array per split.
func writeStacks(out, id string, bands int, inputs []Input, all []fileResult, idx []int, keep map[string]bool) error {
	for _, sp := range []machine.Split{machine.SplitTrain, machine.SplitEval, machine.SplitTest} {
		var files []string
		for _, i := range idx {
			if inputs[i].Split == sp {
				files = append(files, filepath.Join(out, filepath.FromSlash(all[i].row.npy)))
			}
		}
		if len(files) == 0 {
			continue
		}
		sf, err := CreateStackFile(filepath.Join(out, Dir, id, "stack-"+string(sp)+".npy"), bands)
		if err != nil {
			return err
		}
		for _, f := range files {
			data, err := readNPY32(f, bands)
			if err == nil {
				err = sf.Write(data)
			}
			if err != nil {
				sf.Abort()
				return fmt.Errorf("features: stack %s: %w", f, err)
			}
		}
		if err := sf.Close(); err != nil {
			return err
		}
		keep[path.Join(Dir, id, "stack-"+string(sp)+".npy")] = true
	}
	return nil
}

// readNPY32 reads a little-endian float32 .npy file written by WriteNPY
// whose last dimension is cols.
func readNPY32(path string, cols int) ([]float32, error) {
	b, err := os.ReadFile(path)
	if err != nil {
		return nil, err
	}
	return npyFloat32(b, cols)
}

// npyFloat32 decodes the bytes of a little-endian float32 .npy file written
// by WriteNPY whose last dimension is cols.
func npyFloat32(b []byte, cols int) ([]float32, error) {
	if len(b) < 10 || string(b[1:6]) != "NUMPY" {
		return nil, fmt.Errorf("not a .npy file")
	}
	start := 10 + int(binary.LittleEndian.Uint16(b[8:10]))
	if start > len(b) || (len(b)-start)%4 != 0 || ((len(b)-start)/4)%cols != 0 {
		return nil, fmt.Errorf("unexpected .npy layout")
	}
	out := make([]float32, (len(b)-start)/4)
	for i := range out {
		out[i] = math.Float32frombits(binary.LittleEndian.Uint32(b[start+4*i:]))
	}
	return out, nil
}
