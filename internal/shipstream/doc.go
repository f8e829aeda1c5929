// Package shipstream is the client side of the two streaming calls of ShipmentService,
// CheckShipments and RecordShipments, shared by the command line's check verb and the
// console's batches: one Stream over either call, Send to read a file of records and send
// them several to a message, and Answers to match the server's verdicts, which come back
// alone or in groups in the records' order, to the lines of the file.
//
// Lines that cannot be read, and records with fields that could not be read, are answered
// on the client and never sent, so nothing from a bad line is recorded.
package shipstream
