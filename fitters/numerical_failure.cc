#include "fitters/numerical_failure.h"

#include <boost/math/policies/error_handling.hpp>
#include <stdexcept>

namespace sorbtrace::fitters {

std::string NumericalFailureMessage() {
  try {
    throw;
  } catch (const std::domain_error& e) {
    return e.what();
  } catch (const std::overflow_error& e) {
    return e.what();
  } catch (const std::underflow_error& e) {
    return e.what();
  } catch (const boost::math::evaluation_error& e) {
    return e.what();
  } catch (const boost::math::rounding_error& e) {
    return e.what();
  }
}

}  // namespace sorbtrace::fitters
