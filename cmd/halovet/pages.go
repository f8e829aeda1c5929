package main

// listPageSize is the page size the listing verbs ask for: the largest every list of the
// API takes. A verb reads every page (halovetv1.ReadAllPages) and prints the whole list.
// (A variable so that a test can make the pages small.)
var listPageSize int32 = 1000
