package save

// diskFailure is the kind of a failure to create or write a file.
type diskFailure int

const (
	otherFailure diskFailure = iota
	diskFull
	nameTooLong
	diskReadOnly
)
