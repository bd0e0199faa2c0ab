/*
 * Physical constants: the exact defining constants of the 2019 SI and the
 * CODATA 2018 values derived from them.  This is the only place the project
 * takes constants from (GSL's gsl_const_* carry older CODATA values).
 *
 * Source: CODATA 2018 recommended values (Tiesinga, Mohr, Newell & Taylor,
 * Rev. Mod. Phys. 93, 025010, 2021); h, e, k and N_A are exact in the SI.
 */
#ifndef VG_CONST_H
#define VG_CONST_H

#define VG_PI 3.14159265358979323846264338327950288
#define VG_LN10 2.30258509299404568401799145468436421
#define VG_LOG10E 0.434294481903251827651128918916605082 /* 1 / ln 10 */

/* Exact defining constants of the SI (2019). */
#define VG_SI_H 6.62607015e-34          /* Planck constant, J s */
#define VG_SI_E 1.602176634e-19         /* elementary charge, C */
#define VG_SI_K 1.380649e-23            /* Boltzmann constant, J/K */
#define VG_SI_NA 6.02214076e23          /* Avogadro constant, 1/mol */
#define VG_SI_C 299792458.0             /* speed of light, m/s */
#define VG_SI_CAL 4.184                 /* thermochemical calorie, J (ISO 80000-5) */

/* Derived (exact ratios of the above, evaluated in double). */
#define VG_KB_EV (VG_SI_K / VG_SI_E)                      /* 8.617333262e-5 eV/K */
#define VG_HBAR_EVS (VG_SI_H / (2.0 * VG_PI * VG_SI_E))   /* 6.582119569e-16 eV s */
#define VG_HC_EVCM (VG_SI_H * VG_SI_C * 100.0 / VG_SI_E)  /* 1.239841984e-4 eV cm */

/* Unit conversions to the internal energy unit, meV. */
#define VG_MEV_PER_EV 1000.0
#define VG_MEV_PER_CM1 (VG_HC_EVCM * 1000.0)                       /* 0.1239841984 */
#define VG_MEV_PER_KJMOL (1.0e6 / (VG_SI_NA * VG_SI_E))            /* 10.36427 */
#define VG_MEV_PER_KCALMOL (VG_SI_CAL * 1.0e6 / (VG_SI_NA * VG_SI_E)) /* 43.36411 */
#define VG_KB_MEV (VG_KB_EV * 1000.0)                              /* meV/K */

#endif
