package split

import (
	"bytes"
	"fmt"
	"reflect"
	"testing"
)

// FuzzSummaryCSV: no input panics; what reads writes back and reads the
// same again.
func FuzzSummaryCSV(f *testing.F) {
	f.Add("machine,split,origin,label,files,groups\npump,train,recorded,normal,12,4\n")
	f.Add("groups,files,label,origin,split,machine,extra\n1,+2,normal,augmented,eval,\"p,q\",x\n")
	f.Add("machine,split,origin,label,files,groups\npump,train,recorded,normal,x,4\n")
	f.Fuzz(func(t *testing.T, s string) {
		got, err := ReadSummaryCSV(bytes.NewReader([]byte(s)))
		if err != nil {
			return
		}
		var buf bytes.Buffer
		if err := WriteSummaryCSV(&buf, got); err != nil {
			t.Fatal(err)
		}
		again, err := ReadSummaryCSV(&buf)
		if err != nil {
			t.Fatalf("re-read: %v\n%s", err, buf.String())
		}
		if fmt.Sprint(got) != fmt.Sprint(again) {
			t.Fatalf("round trip:\n%v\n%v", got, again)
		}
	})
}

// FuzzBackgroundsCSV: no input panics; what reads writes back and reads
// the same again.
func FuzzBackgroundsCSV(f *testing.F) {
	f.Add("id,split\nhall,train\nyard,test\n")
	f.Add("split,id\neval,\"a\nb\"\n")
	f.Add("id\nhall\n")
	f.Fuzz(func(t *testing.T, s string) {
		got, err := ReadBackgroundsCSV(bytes.NewReader([]byte(s)))
		if err != nil {
			return
		}
		var buf bytes.Buffer
		if err := WriteBackgroundsCSV(&buf, got); err != nil {
			t.Fatal(err)
		}
		again, err := ReadBackgroundsCSV(&buf)
		if err != nil {
			t.Fatalf("re-read: %v\n%s", err, buf.String())
		}
		if !reflect.DeepEqual(got, again) && !(len(got) == 0 && len(again) == 0) {
			t.Fatalf("round trip:\n%v\n%v", got, again)
		}
	})
}
