// Package hydraulics holds the physics of a pressurised water network: SI
// unit types, the Hazen-Williams friction law, C-factor aging, the network
// type and its Global Gradient Algorithm solver, and capacity and sizing checks.
//
// It imports only the standard library and knows no file or geometry format.
package hydraulics
