// Package kinetics turns concentration profiles into rate constants.
package kinetics
