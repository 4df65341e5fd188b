// Package brute is the third, independent way orbitwatch counts orbits:
// it visits every connected induced subgraph of 2..MaxNodes nodes once,
// classifies it with the catalog, and adds one to each member's orbit. It
// shares no counting logic with the static recount or any incremental
// engine, so agreement among the three is evidence, not an echo.
//
// Signed graphs are classified with their signs (a pair's LinkNeg as the
// sign bit of the catalog's signed code), so it counts signed orbits too.
//
// It is built to be obviously correct, not fast: use it on test graphs of
// up to a few hundred edges, never on production graphs.
package brute
