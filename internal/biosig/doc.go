// Package biosig runs save2gdf, the converter of the open biosig library
// (Debian package biosig-tools), as an independent reader for the tests
// of the EDF+, WFDB and HL7 aECG writers: a file we write is read by
// another program and compared with what we wrote (standards.md §5.6
// records which of our files it reads back and its known quirks). Tests
// skip when the program is not installed. Only tests import this package.
package biosig
