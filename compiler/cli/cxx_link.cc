/* Empty C++ file: makes automake link eomc and tests with the C++ driver (GiNaC). */
