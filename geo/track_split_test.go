package geo

import (
	"testing"

	"github.com/paulmach/orb"
)

func TestSplitAtAntimeridian(t *testing.T) {
	// Worked examples written out here: the crossing latitude is linear in longitude.
	// 179 → −179 (2° of longitude) from lat 10 to 12 crosses at 11; tolerance 1e-12.
	tests := []struct {
		name string
		in   orb.LineString
		want orb.MultiLineString
	}{
		{"no crossing", orb.LineString{{170, 0}, {175, 1}}, orb.MultiLineString{{{170, 0}, {175, 1}}}},
		{"eastward crossing", orb.LineString{{178, 9}, {179, 10}, {-179, 12}},
			orb.MultiLineString{{{178, 9}, {179, 10}, {180, 11}}, {{-180, 11}, {-179, 12}}}},
		{"westward crossing", orb.LineString{{-179, 12}, {179, 10}},
			orb.MultiLineString{{{-179, 12}, {-180, 11}}, {{180, 11}, {179, 10}}}},
		{"there and back", orb.LineString{{179, 0}, {-179, 0}, {179, 0}},
			orb.MultiLineString{{{179, 0}, {180, 0}}, {{-180, 0}, {-179, 0}, {-180, 0}}, {{180, 0}, {179, 0}}}},
		{"wide step short of 180 kept", orb.LineString{{-90, 0}, {89, 0}}, orb.MultiLineString{{{-90, 0}, {89, 0}}}},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			got := SplitAtAntimeridian(tc.in)
			if len(got) != len(tc.want) {
				t.Fatalf("got %v, want %v", got, tc.want)
			}
			for i := range got {
				if len(got[i]) != len(tc.want[i]) {
					t.Fatalf("piece %d: got %v, want %v", i, got[i], tc.want[i])
				}
				for j := range got[i] {
					for k := 0; k < 2; k++ {
						if d := got[i][j][k] - tc.want[i][j][k]; d > 1e-12 || d < -1e-12 {
							t.Fatalf("piece %d: got %v, want %v", i, got[i], tc.want[i])
						}
					}
				}
			}
		})
	}
}
