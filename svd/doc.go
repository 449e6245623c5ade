// Package svd is bandsolve's factor analysis: it decomposes the time x wavenumber data
// matrix, decides how many components it holds, and supplies starting points for curve
// resolution.
//
// # Decomposition
//
// D (n x m) = U Σ Vᵀ with U (n x r) and V (m x r) orthonormal and σ_1 ≥ … ≥ σ_r ≥ 0.
// Decompose uses LAPACK's SVD (gonum mat.SVD) for small matrices, otherwise the eigen-
// decomposition of the smaller Gram matrix (D Dᵀ or DᵀD, σ_j² its eigenvalues) or the
// randomized subspace iteration of Halko, Martinsson & Tropp (SIAM Review 2011): Y = (D Dᵀ)^q D Ω
// for a Gaussian Ω with r+10 columns, re-orthonormalized by QR at every step, then the exact
// SVD of the small Qᵀ D. The energy Σ_j σ_j² = ‖D‖²_F is always stored, so the tail
// Σ_{j>k} σ_j² = ‖D‖²_F − Σ_{j≤k} σ_j² is known from the leading values alone.
//
// # Rank
//
// EstimateRank combines four published criteria (see its documentation and docs/rank.md):
// the random-matrix noise floor σ(√n+√m) (Marchenko–Pastur edge; Geman 1980), with σ given,
// from pre-reaction rows, or estimated (Gavish & Donoho 2014); Malinowski's indicator function
// IND(k) = RE(k)/(c−k)², RE(k) = √(Σ_{j>k} λ_j/(r(c−k))) (Anal. Chem. 1977) and his F-test on
// reduced eigenvalues λ_j/((r−j+1)(c−j+1)) (J. Chemometrics 1989); and the lag-1
// autocorrelation of each singular vector (Shrager & Hendler 1982, from memory), because
// chemistry is smooth in time and in wavenumber while noise is not. In difference spectra
// ΔA(t) = A(t) − A(t_ref) the reference's own noise is one fixed spectrum subtracted from
// every row: a factor with a flat time vector and a white spectrum vector, recognised and not
// counted.
//
// # Evolving factor analysis and purest variables
//
// EFA (Gampp, Maeder, Meyer & Zuberbühler, Talanta 1985; Maeder, Anal. Chem. 1987) follows the
// singular values of the first i rows (forward) and the last i rows (backward); a component
// appears when a new value rises out of the noise. Windows pairs appearances and
// disappearances first-in-first-out and gives local rank and presence windows (zero
// constraints); InitialProfiles turns them into starting concentration profiles. Purest picks
// the channels of SIMPLISMA (Windig & Guilment, Anal. Chem. 1991): highest σ_j/(μ_j + α) times
// the determinant of the correlation-about-the-origin matrix of the channels chosen so far.
//
// Everything is deterministic: fixed seeds, fixed summation order, and gonum's parallel
// matrix products split the output into fixed blocks, so results do not depend on GOMAXPROCS.
package svd
