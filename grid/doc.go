// Package grid finds the millimetre grid of an ECG page and calibrates
// time and voltage from it: pixels per millimetre along x and y from the
// grid's periodicity, gain from the 1 mV calibration pulses, paper speed
// from options or the standard 25 mm/s. Every value records its origin.
package grid
