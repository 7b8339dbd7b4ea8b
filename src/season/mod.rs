//! Season planner: arrivals, dispatch policies and the event simulation of a buying point.
