package fault

import (
	"fmt"
	"strings"
)

// Rates are the clip's actual rates in Hz that a cue kind may need: the
// condition's shaft rate times the clip's speed ratio, and the rates that
// follow from the geometry at that shaft rate.
type Rates struct {
	// ShaftHz is the rate of the shaft carrying the bearing, or of the shaft
	// whose orders are raised.
	ShaftHz float64
	// FTF, BPFO, BPFI and BSF are the bearing's kinematic defect rates (BSF
	// itself; a ball defect repeats at 2·BSF).
	FTF, BPFO, BPFI, BSF float64
	// MeshHz is the gear-mesh frequency; FaultShaftHz the shaft rate of the
	// gear carrying the tooth fault.
	MeshHz, FaultShaftHz float64
}

// Params are the drawn parameters of a cue, shared by all kinds; each kind
// uses those it needs, with the zero-value defaults of its type.
type Params struct {
	SeverityDB           float64
	ResonanceHz, Damping float64
	// JitterFrac is the slip jitter of bearing and impact trains (0 is
	// exactly periodic).
	JitterFrac float64
	// ImpactCount is, for kind impact, the number of isolated transients;
	// 0 makes a train at the shaft rate (looseness knocking once per
	// revolution).
	ImpactCount int
}

// New returns the cue of the named kind (one of Kinds) built from the rates
// and parameters. It checks only the kind: call Validate with the sample
// rate to check the rest.
func New(kind string, r Rates, p Params) (Cue, error) {
	bearing := func(defect float64) Bearing {
		return Bearing{Kind: kind, ShaftHz: r.ShaftHz, DefectHz: defect, CageHz: r.FTF,
			ResonanceHz: p.ResonanceHz, Damping: p.Damping, JitterFrac: p.JitterFrac, SeverityDB: p.SeverityDB}
	}
	switch kind {
	case KindOuterRace:
		return bearing(r.BPFO), nil
	case KindInnerRace:
		return bearing(r.BPFI), nil
	case KindBall:
		return bearing(2 * r.BSF), nil
	case KindCage:
		return bearing(r.FTF), nil
	case KindImpact:
		c := Impact{Count: p.ImpactCount, ShaftHz: r.ShaftHz, ResonanceHz: p.ResonanceHz, Damping: p.Damping,
			SeverityDB: p.SeverityDB}
		if p.ImpactCount == 0 {
			c.RateHz, c.JitterFrac = r.ShaftHz, p.JitterFrac
		}
		return c, nil
	case KindImbalance, KindMisalignment:
		return Orders{Kind: kind, ShaftHz: r.ShaftHz, SeverityDB: p.SeverityDB}, nil
	case KindGearTooth:
		return GearTooth{MeshHz: r.MeshHz, FaultShaftHz: r.FaultShaftHz, SeverityDB: p.SeverityDB}, nil
	}
	return nil, fmt.Errorf("fault: unknown kind %q (known: %s)", kind, strings.Join(Kinds(), ", "))
}
