package sim

import (
	"math"

	"gonum.org/v1/gonum/spatial/r3"

	"forereach/zones"
)

// Zone is a named volume for ground-truth queries: a hazard zone of the
// cell without its margin (a zones.Shape, or a *zones.Zone at its pose).
type Zone struct {
	Name   string
	Volume interface{ SignedDistance(r3.Vec) float64 }
}

// FixedZones returns the zones of a set that are fixed in the cell, for
// Truth. Zones attached to a robot frame are left out: the simulator does
// not move the robot.
func FixedZones(set *zones.ZoneSet) []Zone {
	var out []Zone
	for i := 0; i < set.Len(); i++ {
		if z := set.Zone(i); z.Frame == "" {
			out = append(out, Zone{Name: z.Name, Volume: z.Shape})
		}
	}
	return out
}

// Entry is a hand inside a zone's shape from Enter to Exit, on the true
// trajectory (tremor included, sensor effects not).
type Entry struct {
	Track, Zone string
	Enter, Exit float64 // seconds; Exit is the run's duration when Open
	Open        bool    // still inside at the end of the run
	Depth       float64 // greatest depth inside the shape, metres (on the scan grid)
}

// NearPass is an approach of a hand to within the near distance of a zone
// without entering it: the hand stayed closer than near from Start to End
// and came closest, Dist metres from the shape's surface, at T.
type NearPass struct {
	Track, Zone string
	Start, End  float64
	T           float64
	Dist        float64
}

// Approach is the closest a hand came to a zone over a run: Dist metres
// from the shape's surface at T (negative: that deep inside).
type Approach struct {
	Track, Zone string
	T           float64
	Dist        float64
}

// Truth is the ground truth of a run against a set of zones.
type Truth struct {
	Entries    []Entry
	NearPasses []NearPass
	// Closest holds, for each zone in the order given, the closest approach
	// of any hand over the run (the first track wins ties).
	Closest []Approach
}

// TruthStep is the scan step of Truth: 1 ms of simulated time. Excursions
// into a zone, or near passes, shorter than this may be missed; crossing
// and closest-approach times are then refined to within TruthTol.
const (
	TruthStep = 1e-3
	TruthTol  = 1e-9
)

// Hysteresis returns the distance by which a hand must leave a zone (or the
// near distance) for an entry (or a near pass) to end: 1 mm, or five times
// the tremor's RMS when that is more, so that a hand resting at a surface
// and trembling across it counts once. The end time is still the last
// crossing of the surface.
func (r *Run) Hysteresis() float64 { return math.Max(0.001, 5*r.sc.Tremor.RMS) }

// Truth scans every track of the run against every zone over [0, Duration]
// and lists the entries into the zones' shapes and the near passes (closer
// than near metres without entering), ordered by track, then zone, then
// time. An entry or a near pass ends only once the hand is Hysteresis()
// beyond the surface or the near distance. Truth does not disturb the
// measurement stream.
func (r *Run) Truth(zs []Zone, near float64) Truth {
	var out Truth
	hyst := r.Hysteresis()
	n := int(math.Ceil(r.duration/TruthStep)) + 1
	out.Closest = make([]Approach, len(zs))
	for i, z := range zs {
		out.Closest[i] = Approach{Zone: z.Name, Dist: math.Inf(1)}
	}
	for _, tp := range r.plans {
		for zi, z := range zs {
			dist := func(t float64) float64 { return z.Volume.SignedDistance(tp.position(t, nil)) }
			outside := func(t float64) float64 { return -dist(t) }
			nearIn := func(t float64) float64 { return dist(t) - near }
			nearOut := func(t float64) float64 { return near - dist(t) }
			var cursor int
			at := func(k int) (float64, float64) {
				t := math.Min(float64(k)*TruthStep, r.duration)
				return t, z.Volume.SignedDistance(tp.position(t, &cursor))
			}
			var (
				inside, exiting bool // in the zone; out of it but within the hysteresis
				entry           Entry
				nearOn, leaving bool // within near; beyond it but within the hysteresis
				np              NearPass
				entered         bool // the hand entered during the current near interval
				bestK           int
			)
			t0, d0 := at(0)
			prevT := t0
			minK, minD := 0, d0
			if d0 <= 0 {
				inside, entered = true, true
				entry = Entry{Track: tp.name, Zone: z.Name, Enter: 0, Depth: -d0}
			}
			if d0 < near {
				nearOn = true
				np = NearPass{Track: tp.name, Zone: z.Name, Start: 0, T: 0, Dist: d0}
			}
			for k := 1; k < n; k++ {
				t, d := at(k)
				if t <= prevT {
					break
				}
				if d < minD {
					minK, minD = k, d
				}
				// entries
				switch {
				case !inside && d <= 0:
					inside, entered = true, true
					entry = Entry{Track: tp.name, Zone: z.Name, Enter: bisect(dist, prevT, t), Depth: -d}
				case inside && d <= 0:
					exiting = false
					entry.Depth = math.Max(entry.Depth, -d)
				case inside:
					if !exiting {
						exiting = true
						entry.Exit = bisect(outside, prevT, t)
					}
					if d > hyst {
						inside, exiting = false, false
						out.Entries = append(out.Entries, entry)
					}
				}
				// near passes
				switch {
				case !nearOn && d < near:
					nearOn, entered = true, inside
					np = NearPass{Track: tp.name, Zone: z.Name, Start: bisect(nearIn, prevT, t), T: t, Dist: d}
					bestK = k
				case nearOn && d < near:
					leaving = false
					if d < np.Dist {
						np.T, np.Dist, bestK = t, d, k
					}
				case nearOn:
					if !leaving {
						leaving = true
						np.End = bisect(nearOut, prevT, t)
					}
					if d >= near+hyst {
						nearOn, leaving = false, false
						if !entered {
							np.T, np.Dist = refineMin(dist, bestK, r.duration)
							out.NearPasses = append(out.NearPasses, np)
						}
					}
				}
				prevT = t
			}
			if c := &out.Closest[zi]; minD < c.Dist {
				c.Track = tp.name
				c.T, c.Dist = refineMin(dist, minK, r.duration)
			}
			if inside {
				if !exiting {
					entry.Exit, entry.Open = r.duration, true
				}
				out.Entries = append(out.Entries, entry)
			}
			if nearOn && !entered {
				if !leaving {
					np.End = r.duration
				}
				np.T, np.Dist = refineMin(dist, bestK, r.duration)
				out.NearPasses = append(out.NearPasses, np)
			}
		}
	}
	return out
}

// bisect finds the time in (a, b] where f changes from > 0 to <= 0, given
// f(a) > 0 >= f(b), to within TruthTol.
func bisect(f func(float64) float64, a, b float64) float64 {
	for b-a > TruthTol {
		m := a + (b-a)/2
		if m <= a || m >= b {
			break
		}
		if f(m) <= 0 {
			b = m
		} else {
			a = m
		}
	}
	return b
}

// refineMin refines a minimum of f found at grid point k by golden-section
// search over the neighbouring grid interval.
func refineMin(f func(float64) float64, k int, end float64) (float64, float64) {
	a := math.Max(0, float64(k-1)*TruthStep)
	b := math.Min(end, float64(k+1)*TruthStep)
	const g = 0.6180339887498949
	c, d := b-g*(b-a), a+g*(b-a)
	fc, fd := f(c), f(d)
	for b-a > TruthTol {
		if fc < fd {
			b, d, fd = d, c, fc
			c = b - g*(b-a)
			fc = f(c)
		} else {
			a, c, fc = c, d, fd
			d = a + g*(b-a)
			fd = f(d)
		}
	}
	t := (a + b) / 2
	ft := f(t)
	// the grid point itself may be lower when f is not unimodal there
	if tk := math.Min(float64(k)*TruthStep, end); f(tk) < ft {
		return tk, f(tk)
	}
	return t, ft
}
