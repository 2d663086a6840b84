"""Reports: readable text, JSON, IEEE 1364 VCD, Graphviz DOT, JUnit XML."""
