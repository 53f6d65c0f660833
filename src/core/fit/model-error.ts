// The blackbody model-error term (docs/science.md §6): a single blackbody gives a colour temperature, not
// Teff. Beyond the photometric noise, T_fit/Teff scatters on real stars; this term, added in quadrature
// to σ(ln T) when FitOptions.modelErrorFraction is set to it, makes the reported 1σ intervals cover the
// true Teff about 68 % of the time.
//
// How it was measured (fit.benchmark-stars.test.ts recomputes it and fails if it drifts by > 0.003):
// Gaia FGK benchmark stars v3 (Soubiran et al. 2024), file gbs_v3_dev_half.fits (96 stars, 91 with
// Gaia photometry), fundamental Teff 3738–6783 K. Bands: Gaia DR3 G, BP, RP (σ from the flux errors)
// plus the 2MASS J/H/Ks whose quality letter is A; systematic floor 0.02; A_V = 0 (nearby stars); F99.
// The term is the smallest f for which |T_fit − Teff| < √(σ_T,reported² + σ_Teff,ref² + (f·T_fit)²)
// holds for ≥ 68.3 % of the stars. Result: f = 0.032. For comparison, the robust scatter of
// T_fit/Teff − 1 on the same stars is 0.037 (1.4826 × MAD) and its median +0.3 %.
export const BLACKBODY_MODEL_ERROR_FRACTION = 0.032;
