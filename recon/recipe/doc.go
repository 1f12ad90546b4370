// Package recipe holds the reconstruction recipe: every parameter that turns a
// capture into a frame, in the JSON format "spotloom-recipe/1".
//
// A recipe is plain data. Parse and Load read it strictly (an unknown key is
// an error naming the key and the keys allowed there; a syntax error names the
// line and column), Validate checks every value and names the key and the
// allowed values, and JSON writes it back in a stable, indented form so a
// saved recipe can be compared line by line. A nil pointer (JSON null) means
// "find this automatically"; the engine resolves it and reports the value.
// A pitch_mm of 0 (or null) also means automatic.
package recipe
