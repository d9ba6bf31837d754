// Package sim is the operator-approach simulator: it reads a scenario (our
// own YAML format: operators with hands, a timeline of movement primitives,
// sensor effects), and produces the measurements a hand tracker would have
// delivered, in arrival order, on its own simulated time axis starting at
// 0 s. It also gives the ground truth of a run: when each movement started
// and ended, which tracking losses were planted, when a hand entered a zone
// or passed close to it.
//
// The package does no I/O beyond the readers and writers it is given and
// never reads the wall clock; a run is reproducible: the same scenario and
// seed give the same measurements, bit for bit.
//
//	sc, err := sim.Load(f, "demo.yaml", cell) // cell may be nil
//	r := sc.Run(seed)                         // or sc.RunN(seed, i) for run i of a series
//	for m, ok := r.Next(); ok; m, ok = r.Next() {
//		// m.Track, m.T (source time), m.Arrival, m.P (measured), m.Truth
//	}
//	truth := r.Truth(sim.FixedZones(zoneSet), 0.1) // entries, near passes, closest approaches
//
// # Scenario files
//
// Lengths are in metres (or millimetres with units: mm), speeds in length
// units per second, durations are Go durations with a unit ("600ms",
// "1.5s"), angles in degrees. The cell frame is right-handed with z up and
// the floor at z = 0. Unknown keys are errors; every error names
// file:line:column and the field.
//
// Wherever the reference says "or a range", a value may be written as a
// two-element list [low, high]: it is drawn uniformly for each run.
//
//	scenario: demo            # name (default: the file's base name)
//	cell: pl3-palletiser      # the cell it is written for; checked against -c
//	units: m                  # m (default) or mm
//	seed: 1                   # default seed
//	duration: 10s             # run length (default: end of the last step + tail)
//	tail: 500ms               # time after the last step (default 0.5 s)
//	fitts: {a: 100ms, b: 150ms, width: 0.05}   # Fitts' law defaults (see DefaultFitts)
//	tremor: {rms: 0.0002, band: [8, 12]}       # physiological tremor (see DefaultTremor)
//	sensor:
//	  rate: 100               # frames per second
//	  noise: 0.002            # Gaussian position noise, s.d. per axis
//	  latency: 20ms           # mean delay from source time to arrival
//	  jitter: 3ms             # s.d. of the delay (Gaussian, cut at 0)
//	  in_order: true          # a track's samples arrive in source order
//	  dropout: {fraction: 0.01, gap: 50ms}     # random loss: long-run fraction, mean gap
//	  outliers: {rate: 0.001, size: 0.3}       # probability per sample, offset length
//	  occluders:              # a hand inside one is not seen
//	    - {name: stack, box: {min: [4.8, 0.6, 0], max: [6.0, 1.4, 2.0]}}
//	    # any zone shape of the cell file: box, obox, sphere, cylinder, capsule, prism
//	  losses:                 # planted tracking losses
//	    - {track: op1/right, at: 6s, duration: 500ms}   # track, operator, or omitted: all
//	stations:                 # named points; add to (and override) the cell's
//	  - {name: kit-bench, at: [0.3, 1.6, 0.9]}
//	  - {name: kit-tote, at: [0.3, 2.1, 0.85]}
//	operators:
//	  - name: op1             # letters, digits, - _ . ; tracks are op1/<hand>
//	    at: [1.1, 0.6]        # floor position at the start
//	    heading: 90           # facing direction, degrees from +x counter-clockwise
//	    hands:                # default: left [0.25, 0.2, 1.0] and right [0.25, -0.2, 1.0]
//	      - {name: left, rest: [0.25, 0.2, 1.0]}     # body frame: forward, left, up
//	      - {name: right, rest: [0.25, -0.2, 1.0]}
//	    swing: {amplitude: 0.15, frequency: 1.0}     # arm swing while walking
//	    timeline:             # steps run one after the other
//	      - walk: {to: [1.1, 3.7], speed: 1.6, standoff: 0, spread: [0, 0.1, 0]}
//	      - reach: {hand: right, to: infeed, spread: 0.02, duration: 500ms, lift: 0}
//	      - reach: {hand: right, to: rest, width: 0.05}  # duration from Fitts' law
//	      - sweep: {hand: left, center: [1.1, 3.7], angle: -90, rise: 0, duration: 1s}
//	      - pick_place: {hand: left, from: kit-tote, to: kit-bench, cycles: 3,
//	                     dwell: 300ms, lift: 0.1, spread: 0.02, duration: 700ms}
//	      - pause: 400ms
//	      - at: 7s            # start no earlier than 7 s (or a range)
//	        label: jab        # appears in the ground truth
//	        reach: {hand: right, to: [1.62, 3.9, 1.0], duration: 350ms}
//	      - parallel: true    # starts together with the step before (another hand)
//	        reach: {hand: left, to: rest, duration: 350ms}
//
// Targets (to, from, center) are a station name, a point [x, y, z] (walk
// and center also take [x, y]), or rest, the hand's rest position in front
// of the operator where they stand. spread adds a uniform offset of up to
// ± the given amount per axis (one value or [sx, sy, sz]), drawn per run
// (per cycle for pick_place). A movement takes duration (a value or a
// range), or, without it, the Fitts' law time for its distance and width.
//
// Primitives:
//
//   - reach: a minimum-jerk point-to-point movement (Flash & Hogan, 1985)
//     from where the hand is; lift raises the middle of the path by lift
//     (vertical offset lift·4s(1−s) on the progress s), keeping zero
//     velocity and acceleration at both ends.
//   - walk: the whole operator walks in a straight line at speed (default
//     WalkSpeed, 1.6 m/s, ISO 13855), stopping standoff short of the
//     target, and then faces the walking direction. The hands blend to
//     their rest positions over the first 0.6 s (at most half the walk) and
//     swing along the walking direction, left and right in antiphase.
//   - sweep: the hand turns about the vertical axis through center by angle
//     (positive counter-clockwise) with a minimum-jerk angle profile,
//     rising by rise.
//   - pick_place: cycles of reach to from, dwell, reach to to, dwell.
//   - pause: nothing moves (but the tremor).
//
// A step with at starts at that time, or when the step before ends if
// later. Times in the ground truth (Run.Actions) are exact; with the tremor
// off (tremor: {rms: 0}) a reach whose midpoint lies on a zone's face
// crosses it at exactly half its duration, which makes planted incidents
// easy to write.
package sim
