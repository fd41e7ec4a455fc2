package gis

import (
	"math"
)

// This file holds the map-projection maths: Transverse Mercator by the Krüger
// series and Lambert Conformal Conic (one and two standard parallels), both on
// an ellipsoid. Angles are radians inside, degrees at the CRS boundary;
// distances are metres inside.
//
// References:
//   - C. F. F. Karney, "Transverse Mercator with an accuracy of a few
//     nanometers", J. Geodesy 85:475–485 (2011), eqs. 7–11, 35–36 (series to n⁶).
//   - J. P. Snyder, Map Projections — A Working Manual, USGS Professional
//     Paper 1395 (1987), §15 (Lambert Conformal Conic).
//   - IOGP, Geomatics Guidance Note 7-2, EPSG methods 9807, 9801 and 9802.

// crsEllipsoidShape holds the derived constants of an ellipsoid.
type crsEllipsoidShape struct {
	a  float64 // semi-major axis, m
	f  float64 // flattening
	e2 float64 // first eccentricity squared, e² = f(2 − f)
	e  float64 // first eccentricity
	n  float64 // third flattening, n = f/(2 − f)
}

func crsShape(el Ellipsoid) crsEllipsoidShape {
	s := crsEllipsoidShape{a: el.A}
	if el.InvF != 0 {
		s.f = 1 / el.InvF
	}
	s.e2 = s.f * (2 - s.f)
	s.e = math.Sqrt(s.e2)
	s.n = s.f / (2 - s.f)
	return s
}

// crsTauPrime returns τ' = tan χ, the tangent of the conformal latitude, for
// τ = tan φ (Karney 2011, eq. 7):
//
//	σ  = sinh(e·atanh(e·τ/√(1+τ²)))
//	τ' = τ·√(1+σ²) − σ·√(1+τ²)
func crsTauPrime(tau, e float64) float64 {
	tau1 := math.Hypot(1, tau)
	sig := math.Sinh(e * math.Atanh(e*tau/tau1))
	return math.Hypot(1, sig)*tau - sig*tau1
}

// crsTauFromPrime inverts crsTauPrime by Newton's method (Karney 2011, eqs. 19–21):
//
//	δτ = (τ' − τ'ᵢ)/√(1+τ'ᵢ²) · (1 + (1−e²)τᵢ²)/((1−e²)·√(1+τᵢ²))
//
// It converges to full double precision in 2–3 steps for terrestrial ellipsoids.
func crsTauFromPrime(taup, e, e2 float64) float64 {
	if math.IsInf(taup, 0) || math.IsNaN(taup) {
		return taup
	}
	tau := taup / (1 - e2) // a good first guess for small e
	for i := 0; i < 8; i++ {
		tp := crsTauPrime(tau, e)
		dtau := (taup - tp) * (1 + (1-e2)*tau*tau) /
			((1 - e2) * math.Hypot(1, tau) * math.Hypot(1, tp))
		tau += dtau
		if math.Abs(dtau) <= 1e-15*math.Max(1, math.Abs(tau)) {
			break
		}
	}
	return tau
}

// crsTM holds the constants of one Transverse Mercator projection (EPSG 9807).
type crsTM struct {
	sh     crsEllipsoidShape
	k0A    float64    // k₀·A, m; A is the rectifying radius
	alpha  [7]float64 // Krüger α₁…α₆ (index 0 unused)
	beta   [7]float64 // Krüger β₁…β₆
	lon0   float64    // central meridian, rad
	y0     float64    // k₀·A·ξ(φ₀): northing of the latitude of origin, m
	fe, fn float64    // false easting and northing, m
}

// newCRSTM builds the Krüger series to sixth order in n (Karney 2011, eqs. 14, 35, 36):
//
//	A  = a/(1+n) · (1 + n²/4 + n⁴/64 + n⁶/256)
//	α₁ = n/2 − 2n²/3 + 5n³/16 + 41n⁴/180 − 127n⁵/288 + 7891n⁶/37800, …
//	β₁ = n/2 − 2n²/3 + 37n³/96 − n⁴/360 − 81n⁵/512 + 96199n⁶/604800, …
func newCRSTM(el Ellipsoid, lat0, lon0, k0, fe, fn float64) *crsTM {
	sh := crsShape(el)
	n := sh.n
	n2 := n * n
	n3, n4, n5, n6 := n2*n, n2*n2, n2*n2*n, n2*n2*n2
	p := &crsTM{sh: sh, lon0: lon0 * math.Pi / 180, fe: fe, fn: fn}
	A := sh.a / (1 + n) * (1 + n2/4 + n4/64 + n6/256)
	p.k0A = k0 * A
	p.alpha = [7]float64{0,
		n/2 - 2*n2/3 + 5*n3/16 + 41*n4/180 - 127*n5/288 + 7891*n6/37800,
		13*n2/48 - 3*n3/5 + 557*n4/1440 + 281*n5/630 - 1983433*n6/1935360,
		61*n3/240 - 103*n4/140 + 15061*n5/26880 + 167603*n6/181440,
		49561*n4/161280 - 179*n5/168 + 6601661*n6/7257600,
		34729*n5/80640 - 3418889*n6/1995840,
		212378941 * n6 / 319334400,
	}
	p.beta = [7]float64{0,
		n/2 - 2*n2/3 + 37*n3/96 - n4/360 - 81*n5/512 + 96199*n6/604800,
		n2/48 + n3/15 - 437*n4/1440 + 46*n5/105 - 1118711*n6/3870720,
		17*n3/480 - 37*n4/840 - 209*n5/4480 + 5569*n6/90720,
		4397*n4/161280 - 11*n5/504 - 830251*n6/7257600,
		4583*n5/161280 - 108847*n6/3991680,
		20648693 * n6 / 638668800,
	}
	// On the central meridian ξ' is the conformal latitude and ξ the
	// rectifying latitude μ, so the meridian arc to φ₀ is A·ξ(φ₀).
	phi0 := lat0 * math.Pi / 180
	xi0p := math.Atan(crsTauPrime(math.Tan(phi0), sh.e))
	if math.Abs(lat0) == 90 {
		xi0p = phi0
	}
	xi0 := xi0p
	for j := 1; j <= 6; j++ {
		xi0 += p.alpha[j] * math.Sin(2*float64(j)*xi0p)
	}
	p.y0 = p.k0A * xi0
	return p
}

// forward maps lon/lat (rad) to easting/northing (m) (Karney 2011, eqs. 8–11):
//
//	ξ' = atan2(τ', cos λ),  η' = asinh(sin λ / √(τ'² + cos²λ))
//	ξ  = ξ' + Σⱼ αⱼ sin 2jξ' cosh 2jη',  η = η' + Σⱼ αⱼ cos 2jξ' sinh 2jη'
//	E  = FE + k₀Aη,  N = FN + k₀Aξ − k₀Aξ(φ₀)
func (p *crsTM) forward(lon, lat float64) (x, y float64) {
	lam := math.Remainder(lon-p.lon0, 2*math.Pi)
	taup := crsTauPrime(math.Tan(lat), p.sh.e)
	if math.Abs(lat) == math.Pi/2 {
		taup = math.Copysign(math.Inf(1), lat)
	}
	sl, cl := math.Sincos(lam)
	xip := math.Atan2(taup, cl)
	etap := math.Asinh(sl / math.Hypot(taup, cl))
	dxi, deta := crsClenshawSin(&p.alpha, xip, etap)
	xi, eta := xip+dxi, etap+deta
	return p.fe + p.k0A*eta, p.fn + p.k0A*xi - p.y0
}

// inverse maps easting/northing (m) to lon/lat (rad) (Karney 2011, eqs. 11, 12, 19):
//
//	ξ' = ξ − Σⱼ βⱼ sin 2jξ cosh 2jη,  η' = η − Σⱼ βⱼ cos 2jξ sinh 2jη
//	τ' = sin ξ' / √(sinh²η' + cos²ξ'),  λ = atan2(sinh η', cos ξ')
//
// and φ = atan τ with τ found from τ' by Newton's method.
func (p *crsTM) inverse(x, y float64) (lon, lat float64) {
	xi := (y - p.fn + p.y0) / p.k0A
	eta := (x - p.fe) / p.k0A
	dxi, deta := crsClenshawSin(&p.beta, xi, eta)
	xip, etap := xi-dxi, eta-deta
	sxi, cxi := math.Sincos(xip)
	she := math.Sinh(etap)
	taup := sxi / math.Hypot(she, cxi)
	tau := crsTauFromPrime(taup, p.sh.e, p.sh.e2)
	lat = math.Atan(tau)
	lon = math.Atan2(she, cxi) + p.lon0
	return math.Remainder(lon, 2*math.Pi), lat
}

// crsClenshawSin sums Σⱼ₌₁⁶ cⱼ sin(2j·ζ) for complex ζ = ξ + iη by
// Clenshaw's recurrence (Karney 2011, §4), returning the real and imaginary
// parts (Σ cⱼ sin 2jξ cosh 2jη and Σ cⱼ cos 2jξ sinh 2jη):
//
//	bₖ = cₖ + 2cos(2ζ)·bₖ₊₁ − bₖ₊₂,  sum = b₁·sin(2ζ)
//
// It costs four transcendental calls instead of twenty-four.
func crsClenshawSin(c *[7]float64, xi, eta float64) (re, im float64) {
	s2, c2 := math.Sincos(2 * xi)
	sh2, ch2 := math.Sinh(2*eta), math.Cosh(2*eta)
	sinZ := complex(s2*ch2, c2*sh2)  // sin 2ζ
	cosZ := complex(c2*ch2, -s2*sh2) // cos 2ζ
	a := 2 * cosZ
	var b1, b2 complex128
	for j := 6; j >= 1; j-- {
		b1, b2 = a*b1-b2+complex(c[j], 0), b1
	}
	z := sinZ * b1
	return real(z), imag(z)
}

// crsLCC holds the constants of one Lambert Conformal Conic projection
// (EPSG 9801 one standard parallel, 9802 two).
type crsLCC struct {
	sh     crsEllipsoidShape
	n      float64 // cone constant
	aFk    float64 // a·F·k₀, m (k₀ = 1 for 2SP)
	rF     float64 // radius of the latitude of (false) origin, m
	lon0   float64 // rad
	fe, fn float64 // m
}

// crsLCCm returns m = cos φ / √(1 − e² sin² φ) (Snyder eq. 14-15).
func crsLCCm(phi float64, sh crsEllipsoidShape) float64 {
	s, c := math.Sincos(phi)
	return c / math.Sqrt(1-sh.e2*s*s)
}

// crsLCCt returns t = tan(π/4 − φ/2) / ((1 − e sin φ)/(1 + e sin φ))^(e/2) (Snyder eq. 15-9).
func crsLCCt(phi float64, sh crsEllipsoidShape) float64 {
	s := math.Sin(phi)
	return math.Tan(math.Pi/4-phi/2) / math.Pow((1-sh.e*s)/(1+sh.e*s), sh.e/2)
}

// newCRSLCC builds the constants (GN 7-2 §3.2.1.1; Snyder eqs. 15-8, 15-10):
//
//	2SP: n = (ln m₁ − ln m₂)/(ln t₁ − ln t₂),  F = m₁/(n·t₁ⁿ),  k₀ = 1, φ_F = lat0
//	1SP: n = sin φ₀,  F = m₀/(n·t₀ⁿ)
//	r = a·F·k₀·tⁿ;  r_F = r(φ origin)
//
// A 2SP cone with equal parallels is the 1SP cone tangent there.
func newCRSLCC(el Ellipsoid, method Method, lat0, lon0, lat1, lat2, k0, fe, fn float64) *crsLCC {
	sh := crsShape(el)
	d := math.Pi / 180
	p := &crsLCC{sh: sh, lon0: lon0 * d, fe: fe, fn: fn}
	phiF := lat0 * d
	var F float64
	if method == LambertConic1SP {
		phi0 := lat0 * d
		p.n = math.Sin(phi0)
		F = crsLCCm(phi0, sh) / (p.n * math.Pow(crsLCCt(phi0, sh), p.n))
	} else {
		k0 = 1
		phi1, phi2 := lat1*d, lat2*d
		m1, m2 := crsLCCm(phi1, sh), crsLCCm(phi2, sh)
		t1, t2 := crsLCCt(phi1, sh), crsLCCt(phi2, sh)
		if math.Abs(phi1-phi2) < 1e-12 {
			p.n = math.Sin(phi1)
		} else {
			p.n = (math.Log(m1) - math.Log(m2)) / (math.Log(t1) - math.Log(t2))
		}
		F = m1 / (p.n * math.Pow(t1, p.n))
	}
	p.aFk = sh.a * F * k0
	p.rF = p.radius(phiF)
	return p
}

func (p *crsLCC) radius(phi float64) float64 {
	if math.Abs(phi-math.Copysign(math.Pi/2, p.n)) < 1e-15 {
		return 0
	}
	return p.aFk * math.Pow(crsLCCt(phi, p.sh), p.n)
}

// forward (Snyder eqs. 15-1, 15-2, 15-9; GN 7-2 method 9802):
//
//	θ = n(λ − λ₀);  E = FE + r sin θ;  N = FN + r_F − r cos θ
func (p *crsLCC) forward(lon, lat float64) (x, y float64) {
	r := p.radius(lat)
	theta := p.n * math.Remainder(lon-p.lon0, 2*math.Pi)
	s, c := math.Sincos(theta)
	return p.fe + r*s, p.fn + p.rF - r*c
}

// inverse (Snyder eqs. 15-5, 15-7, 7-9; GN 7-2):
//
//	r' = ±√((E−FE)² + (r_F − (N−FN))²) (sign of n);  t' = (r'/(aFk₀))^(1/n)
//	θ' = atan2(±(E−FE), ±(r_F − (N−FN)));  λ = θ'/n + λ₀
//	φ = π/2 − 2 atan(t'·((1 − e sin φ)/(1 + e sin φ))^(e/2)), iterated
func (p *crsLCC) inverse(x, y float64) (lon, lat float64) {
	dx := x - p.fe
	dy := p.rF - (y - p.fn)
	sgn := math.Copysign(1, p.n)
	r := sgn * math.Hypot(dx, dy)
	theta := math.Atan2(sgn*dx, sgn*dy)
	lon = math.Remainder(theta/p.n+p.lon0, 2*math.Pi)
	if r == 0 {
		return lon, math.Copysign(math.Pi/2, p.n)
	}
	t := math.Pow(r/p.aFk, 1/p.n)
	// Solve via the conformal latitude: τ' = tan χ with χ = π/2 − 2 atan t.
	chi := math.Pi/2 - 2*math.Atan(t)
	tau := crsTauFromPrime(math.Tan(chi), p.sh.e, p.sh.e2)
	return lon, math.Atan(tau)
}
