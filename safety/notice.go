// Package safety holds the standards' distance formulas (ISO 13855 minimum
// distance, ISO/TS 15066 protective separation distance), zone-margin sizing
// from measured forecast error, and the advisory-only notice that every live
// command, payload and report carries.
package safety

// Notice is the full safety notice printed by live commands and reports.
const Notice = `SAFETY NOTICE: forereach is ADVISORY ONLY. Its forecasts and slow-down
requests are not a protective function and must never be relied on to protect
people. Protective functions belong to certified safety hardware and
safety-rated controllers designed to the applicable standards (ISO 10218-1/-2,
ISO 13849-1, IEC 62061, ISO 13855, ISO/TS 15066) and to a risk assessment by
qualified people; local codes prevail.`

// Short is the one-line statement carried in every advisory payload.
const Short = "advisory only: not a protective function; safety relies on certified safety-rated equipment and a risk assessment"
