// Package kinetics turns concentration profiles (or reaction extents, or a whole data matrix)
// into rate constants of a reaction scheme written in the chemist's notation.
//
// # Schemes and rate laws
//
// ParseScheme reads "A -> B -> C", "A -> B; A -> C", "A + B -> C", "2 A -> P". Step j has
// reactant coefficients ν_ij and the mass-action rate of reaction (IUPAC convention)
//
//	r_j = k_j Π_i c_i^ν_ij,   dc/dt = N r(c),   dξ/dt = r(c),  ξ(t0) = 0,
//
// with N the stoichiometric matrix (products − reactants) and ξ the reaction extents, so that
// c(t) = c0 + N ξ(t). Under this convention 2A → P gives d[A]/dt = −2k[A]² and
// 1/[A] − 1/[A]0 = 2kt; A + B → P with [A]0 = [B]0 gives 1/[A] − 1/[A]0 = kt.
//
// # Simulation
//
// A first-order network is linear, d/dt [c; ξ] = M [c; ξ] with constant M, and is solved
// exactly as [c; ξ](t) = exp(M (t − t0)) [c0; 0], through the eigendecomposition of the
// species block K = V Λ V⁻¹ (c = V e^{Λt} V⁻¹ c0, ξ through (e^{λt} − 1)/λ) when V is well
// conditioned. Nearly equal rate constants make V ill-conditioned (the limit k t e^{−kt} of the
// Bateman (1910) formula); without cycles (no reversible step) K is then taken as triangular in
// a topological order and exp(Kt) as a sum over reaction paths of products of rate constants
// times divided differences of e^{xt} at the paths' decay rates (Davis 1973), computed by a
// Taylor series over clusters of nearly equal rates and by the recurrence elsewhere (McCurdy,
// Ng & Parlett 1984): every term is positive, so the solution is accurate to 1e-12 at any k·t
// and for equal rate constants. Only networks with cycles and a nearly defective K use gonum's
// Padé scaling and squaring. Other networks are integrated by the embedded
// Dormand & Prince (1980) 5(4) Runge–Kutta pair with local error control (RMS norm of
// e/(atol + rtol·|y|), step factor 0.9·err^(−1/5)) and the starting step of Hairer, Nørsett &
// Wanner (Solving ODEs I, 1993). Stiffness is detected as Hairer & Wanner do for DOPRI5
// (h·‖f(y7) − f(y6)‖/‖y7 − y6‖ ≈ h|λ| > 3.25 on 15 accepted steps) or from a collapsing step
// size; the integration then continues with the L-stable Rosenbrock 2(3) pair of Shampine &
// Reichelt (1997). Steps are shortened to hit the output times exactly. The stiffness ratio
// (Lambert 1973) from the eigenvalues of the Jacobian is reported as well.
//
// # Fitting
//
// Rate constants (and optionally non-zero initial concentrations) are fitted as θ = ln k, so
// they stay positive, by LevenbergMarquardt, a trust-region Levenberg–Marquardt after Moré
// (1978) with central-difference Jacobians. With Amplitudes each observed column is a_j times
// its model column, and with FitData the spectra S in D ≈ C(k) Sᵀ are solved by linear least
// squares inside every residual evaluation (variable projection, Golub & Pereyra 1973); the
// nonlinear problem then has only the rate constants. Standard errors are
// se(θ) = sqrt(diag(σ²(JᵀJ)⁻¹)) with σ² = SSR/(N − p − linear parameters), N the residuals
// that are linearly independent (profiles under closure, Σ_k c_k = const, leave n·(q − 1) of
// the n·q: the rank of the n × q residual), computed from the SVD of J (so JᵀJ is never formed); se(k) = k·se(θ) by the delta method; the correlation
// matrix is the same in θ and k to first order. For the variable-projection residual the
// Jacobian of the projected functional gives the nonlinear block of the full covariance
// (Golub & Pereyra 1973). Without starting values a small grid of k·T values (T the time
// span, divided by c0^(order−1) for higher orders) is screened and the best three points are
// refined. Half-lives are ln 2/k for first-order steps, 1/(2k[A]0) for 2A → … and 1/(k[A]0)
// for A + B → … (assuming [A]0 = [B]0); FitResult.HalfLifeNote states which was used.
//
// AutoMap scores every assignment of observed columns to species (or steps) by the cosines of
// their shapes at the starting rate constants and fits only the few best, keeping the best fit
// among those whose every observed column correlates above −0.5 in time with its model column
// (a profile that rises is not a reactant); FitResult.MapNote says when that passed over a
// lower residual, or (beginning MapNoteEveryOpposed) that every assignment fitted had such a
// column and the lowest residual was kept regardless.
//
// All computations are serial with a fixed summation order, so results are bit-identical
// from run to run.
package kinetics
