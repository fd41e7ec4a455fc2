// Package demotown generates the invented town of Quillmere: its water mains, supplies, demand points and
// terrain, deterministically from a seed, as GeoJSON layers headroom runs on.
//
// The town is laid out on a slightly rotated, jittered street lattice of rectangular blocks (400 by
// 330 ft), bent along a river that only a few bridges cross, clipped to an irregular outline and
// broken by open ground around its two supply sites. Larger towns repeat the same district pattern
// (an old cast-iron core, rings of later decades, an arterial loop, a tank on the ridge and a
// reservoir) once per district, so pressures stay plausible at any size. Every quantity is written
// in US units: feet, inches, gallons per minute.
package demotown
