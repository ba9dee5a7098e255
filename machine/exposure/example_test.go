package exposure_test

import (
	"fmt"
	"os"

	"thrum/machine/exposure"
)

func ExampleNewReport() {
	// Two hours next to a pump at 94 dB(A).
	r, err := exposure.NewReport(94, 2)
	if err != nil {
		fmt.Println(err)
		return
	}
	if err := r.Format(os.Stdout); err != nil {
		fmt.Println(err)
	}
	// Output:
	// Noise exposure at 94.0 dB(A) for 2 h a day
	//
	// NIOSH REL  (85 dB(A), 3-dB exchange): permitted 1 h, dose 200 %, TWA 88.0 dB(A)
	// OSHA PEL   (90 dB(A), 5-dB exchange): permitted 4 h 36 min, dose 44 %, TWA 84.0 dB(A)
	// EU 2003/10/EC: LEX,8h 88.0 dB(A), reaches the exposure limit value (87 dB(A))
	//
	// Recording near running machinery:
	// - Hearing protection at and above 85 dB(A) over a shift; each +3 dB halves safe time.
	// - Keep yourself and cables clear of rotating shafts, couplings, belts and fan intakes.
	// - Fit or move sensors only under the site's lock-out/tag-out procedure.
	// - Never remove or open a guard to place a microphone.
	// - Local regulations and the site's safety rules take precedence over these notes.
}

func ExampleCriterion_AllowedHours() {
	for _, c := range []exposure.Criterion{exposure.NIOSH(), exposure.OSHA()} {
		fmt.Printf("%s at 100 dB(A): %s\n", c.Name, exposure.Duration(c.AllowedHours(100)))
	}
	// Output:
	// NIOSH REL at 100 dB(A): 15 min
	// OSHA PEL at 100 dB(A): 2 h
}
