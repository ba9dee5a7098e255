package evaluate_test

import (
	"fmt"

	"thrum/features/evaluate"
)

// Three normal and two anomalous clips; one anomalous clip ties a normal
// one. Of the 6 (anomalous, normal) pairs the anomalous clip wins 5 and
// ties 1: AUC = 5.5/6.
func ExampleAUC() {
	s := []evaluate.Scored{
		{Score: 0.2, Group: "rec1"},
		{Score: 0.5, Group: "rec1"},
		{Score: 0.7, Group: "rec2"},
		{Score: 0.7, Anomalous: true, Group: "rec3"},
		{Score: 0.9, Anomalous: true, Group: "rec3"},
	}
	fmt.Printf("AUC %.4f\n", evaluate.AUC(s))
	fmt.Printf("pAUC(0.5) %.4f\n", evaluate.PartialAUC(s, 0.5))
	// Output:
	// AUC 0.9167
	// pAUC(0.5) 0.8333
}
