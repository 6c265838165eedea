package diag

import (
	"math/big"
	"sync"
)

// radialSquared returns the square of the hydrogenic radial dipole
// integral R(n,l; n′,l−1) = ∫ R_{n,l} r R_{n′,l−1} r² dr, in units of the
// (reduced) Bohr radius, as an exact rational number. It implements
// Gordon's closed form (Bethe & Salpeter 1957, §63, eq. 63.2):
//
//	R(n,l; n′,l−1) = (−1)^(n′−l)/(4(2l−1)!) · √[(n+l)!(n′+l−1)!/((n−l−1)!(n′−l)!)]
//	                · (4nn′)^(l+1) (n−n′)^(n+n′−2l−2)/(n+n′)^(n+n′)
//	                · { F(−n_r, −n_r′; 2l; x) − ((n−n′)/(n+n′))² F(−n_r−2, −n_r′; 2l; x) }
//
// with n_r = n−l−1, n_r′ = n′−l, x = −4nn′/(n−n′)² and F the terminating
// Gauss hypergeometric series. Squaring removes the square root, so the
// whole computation stays in exact rational arithmetic and no
// cancellation between the two hypergeometric terms is lost.
//
// Preconditions: n ≠ n′, 1 ≤ l ≤ n−1 and l−1 ≤ n′−1.
//
// References:
//
//	Gordon, W. 1929, Ann. Phys. (Leipzig) 394, 1031 (citation from memory).
//	Bethe, H. A. & Salpeter, E. E. 1957, Quantum Mechanics of One- and
//	Two-Electron Atoms (Springer), §63.
func radialSquared(n, l, np int) *big.Rat {
	if n == np || l < 1 || l > n-1 || l > np {
		panic("diag: radialSquared called outside its domain")
	}
	nr, nrp := n-l-1, np-l
	diff := int64(n - np)
	sum := int64(n + np)

	// Prefactor squared: [1/(4(2l−1)!)]² · (n+l)!(n′+l−1)!/((n−l−1)!(n′−l)!)
	pre := new(big.Rat).SetFrac(
		new(big.Int).Mul(fact(n+l), fact(np+l-1)),
		new(big.Int).Mul(fact(n-l-1), fact(np-l)),
	)
	den := new(big.Int).Mul(big.NewInt(4), fact(2*l-1))
	den.Mul(den, den)
	pre.Quo(pre, new(big.Rat).SetInt(den))

	// [(4nn′)^(l+1) (n−n′)^(n+n′−2l−2)/(n+n′)^(n+n′)]²
	num := new(big.Int).Exp(big.NewInt(int64(4*n*np)), big.NewInt(int64(2*(l+1))), nil)
	num.Mul(num, new(big.Int).Exp(big.NewInt(diff), big.NewInt(int64(2*(n+np-2*l-2))), nil))
	dd := new(big.Int).Exp(big.NewInt(sum), big.NewInt(int64(2*(n+np))), nil)
	pre.Mul(pre, new(big.Rat).SetFrac(num, dd))

	// Hypergeometric bracket.
	x := new(big.Rat).SetFrac(big.NewInt(int64(-4*n*np)), big.NewInt(diff*diff))
	f1 := hyp2f1Terminating(-nr, -nrp, 2*l, x)
	f2 := hyp2f1Terminating(-nr-2, -nrp, 2*l, x)
	ratio := new(big.Rat).SetFrac(big.NewInt(diff*diff), big.NewInt(sum*sum))
	br := new(big.Rat).Sub(f1, new(big.Rat).Mul(ratio, f2))
	br.Mul(br, br)
	return pre.Mul(pre, br)
}

// hyp2f1Terminating sums F(a, b; c; x) = Σ_k (a)_k (b)_k/((c)_k k!) x^k for
// integers a ≤ 0 or b ≤ 0 (so the series terminates) and c ≥ 1.
func hyp2f1Terminating(a, b, c int, x *big.Rat) *big.Rat {
	sum := new(big.Rat).SetInt64(1)
	term := new(big.Rat).SetInt64(1)
	for k := 0; ; k++ {
		// term_{k+1} = term_k · (a+k)(b+k)/((c+k)(k+1)) · x
		numer := int64(a+k) * int64(b+k)
		if numer == 0 {
			return sum
		}
		term.Mul(term, new(big.Rat).SetFrac(big.NewInt(numer), big.NewInt(int64(c+k)*int64(k+1))))
		term.Mul(term, x)
		sum.Add(sum, term)
	}
}

func fact(n int) *big.Int {
	if n < 0 {
		panic("diag: factorial of a negative number")
	}
	return new(big.Int).MulRange(1, int64(n))
}

// infiniteMassLineStrength returns the line strength S(n→n′) summed over
// l, m and spin, in units of (e a_μ)², as an exact rational:
//
//	S = 2 Σ_l [ l·R²(n,l; n′,l−1) + l·R²(n′,l; n,l−1) ]
//
// (Bethe & Salpeter 1957, §63). The factor 2 counts the spin states.
func infiniteMassLineStrength(n, np int) *big.Rat {
	s := new(big.Rat)
	for l := 1; l <= n-1 && l <= np; l++ {
		s.Add(s, new(big.Rat).Mul(new(big.Rat).SetInt64(int64(l)), radialSquared(n, l, np)))
	}
	for l := 1; l <= np-1 && l <= n; l++ {
		s.Add(s, new(big.Rat).Mul(new(big.Rat).SetInt64(int64(l)), radialSquared(np, l, n)))
	}
	return s.Mul(s, new(big.Rat).SetInt64(2))
}

type pair struct{ hi, lo int }

var strengthCache sync.Map // pair → float64

// lineStrengthReducedUnits returns S(n_u→n_l) in (e a_μ)²: from
// lineStrengthTable up to MaxLevel (the exact values rounded to float64,
// so that no input pays seconds for them), otherwise computed and cached.
// It is symmetric in its arguments.
func lineStrengthReducedUnits(nu, nl int) float64 {
	if nu < nl {
		nu, nl = nl, nu
	}
	if nu <= MaxLevel && nl >= 1 {
		return lineStrengthTable[nu][nl]
	}
	key := pair{nu, nl}
	if v, ok := strengthCache.Load(key); ok {
		return v.(float64)
	}
	f, _ := infiniteMassLineStrength(nu, nl).Float64()
	strengthCache.Store(key, f)
	return f
}
