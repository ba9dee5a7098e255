package augment

// Transform is one augmentation step. Apply writes the result into dst (nil
// allocates; dst may not alias x unless documented) and returns it. fs is
// the sample rate in Hz.
type Transform interface {
	Apply(dst, x []float64, fs float64) []float64
}
