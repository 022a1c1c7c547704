// The probability model of conform.h (internal): (Y - y)/u ~ Student t with nu degrees of
// freedom, normal for infinite nu (JCGM 100:2008 G.3; JCGM 106:2012 §7). Boost.Math.
#pragma once

namespace sorbtrace::conform::internal {

// F(z): P((Y - y)/u <= z); F(-inf) = 0, F(+inf) = 1.
double StandardCdf(double z, double degrees_of_freedom);

// F^-1(p) for 0 < p < 1.
double StandardQuantile(double p, double degrees_of_freedom);

// p_c = P(lower <= Y <= upper) for Y ~ y + u t_nu; limits may be infinite. For u = 0:
// 1 if lower <= y <= upper, else 0.
double ConformanceProbability(double y, double u, double degrees_of_freedom, double lower,
                              double upper);

// The largest measured value a in [mid, upper] with p_c(a) >= p_required, for a two-sided
// interval [lower, upper] (p_c falls monotonically from the midpoint outwards: symmetric,
// unimodal F). NaN when p_c(midpoint) < p_required. u > 0.
double UpperAcceptanceLimitTwoSided(double u, double degrees_of_freedom, double lower, double upper,
                                    double p_required);

}  // namespace sorbtrace::conform::internal
