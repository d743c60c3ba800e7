//! Fleet statistics: grouping, rates, tests of difference, Weibull. Pure.
