// Package strictjson reads the project's JSON files (recipes, rigs, raw
// layouts) one strict way: an unknown key, a duplicate key, a wrong type
// or broken syntax is an error naming the dotted key and its line:column,
// a UTF-8 byte-order mark is accepted, and values quoted in messages are
// cut to a bounded length (Quote), so every file reports its problems the
// same way. It imports only the standard library (encoding/json, RFC 8259),
// so every package of the module can use it.
package strictjson
