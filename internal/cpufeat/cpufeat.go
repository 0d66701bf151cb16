// Package cpufeat reports the processor features that Lodestone's assembly
// kernels need, so that each package with such kernels can choose them or
// its portable Go code at start-up.
package cpufeat
