package machine

import (
	"fmt"
	"strconv"
)

// Channel modes: how a multichannel recording becomes the mono streams the
// stages work on.
//
//   - "mean" (the default) averages the channels. For coincident or closely
//     spaced microphones this is a clean mono mix; for a spaced pair or array
//     it is a comb filter: a source off the array's axis reaches the
//     microphones with a path difference d and the mean has notches at odd
//     multiples of c/(2d) (for d = 0.24 m about 0.7, 2.1, 3.6 kHz), which a
//     detector can learn as a property of the recorder.
//   - "N" keeps channel N alone (counted from 1, as on a recorder's inputs).
//   - "each" makes every channel its own stream, as if each microphone were a
//     recording of its own: the streams share the take's split group (a take
//     never straddles splits), the ledger names the channel, and output
//     names carry it ("-ch2").
const (
	ChannelsMean = "mean"
	ChannelsEach = "each"
)

// ParseChannels reads a channel mode: mean (also ""), each, or a channel
// number N ≥ 1, returned as channel.
func ParseChannels(mode string) (kind string, channel int, err error) {
	switch mode {
	case "", ChannelsMean:
		return ChannelsMean, 0, nil
	case ChannelsEach:
		return ChannelsEach, 0, nil
	}
	n, err := strconv.Atoi(mode)
	if err != nil || n < 1 || n > 64 {
		return "", 0, fmt.Errorf("%q is not one of mean, each or a channel number 1 … 64", mode)
	}
	return "one", n, nil
}

// ChannelMode is the channel mode for a condition of the machine: the
// condition's, else the machine's, else mean.
func (m *Machine) ChannelMode(c *Condition) string {
	if c != nil && c.Channels != "" {
		return c.Channels
	}
	if m.Channels != "" {
		return m.Channels
	}
	return ChannelsMean
}
