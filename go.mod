module spotloom

go 1.26.0

require (
	fyne.io/fyne/v2 v2.7.1 // indirect
	github.com/go-audio/audio v1.0.0 // indirect
	github.com/go-audio/riff v1.0.0 // indirect
	github.com/go-audio/wav v1.1.0 // indirect
	golang.org/x/image v0.48.0 // indirect
	gonum.org/v1/gonum v0.17.0 // indirect
)
