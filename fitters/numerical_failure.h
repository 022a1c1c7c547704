// Which exceptions a computation may turn into a flag, and which are bugs.
//
// A numerical failure is the numbers failing, not the code: an argument outside the domain of
// a correlation or distribution (std::domain_error, which includes physics::RangeError and
// Boost.Math's domain and pole errors), an overflow or underflow (std::overflow_error,
// std::underflow_error, Boost.Math's default policies), a Boost.Math series or root search
// that did not converge (boost::math::evaluation_error, boost::math::rounding_error). Ceres
// and Eigen report failures through return values, not exceptions. Anything else escaping a
// computation (std::logic_error, std::out_of_range, std::bad_alloc, fmt::format_error, ...)
// is a bug and must reach the run stage's single exit-code mapping (internal error, 70).
#pragma once

#include <string>

namespace sorbtrace::fitters {

// Call only inside a catch block. Returns what() of the exception being handled when it is a
// numerical failure (above); rethrows any other exception unchanged.
std::string NumericalFailureMessage();

}  // namespace sorbtrace::fitters
