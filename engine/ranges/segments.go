package ranges

import "github.com/leadline/leadline/engine/segment"

// Segment is one --by column; see package segment.
type Segment = segment.Segment

// Key names one segment: the value of each --by column; see package segment.
type Key = segment.Key
