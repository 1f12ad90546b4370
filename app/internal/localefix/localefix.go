// Package localefix maps the "C.UTF-8" locale to plain "C" before Fyne's
// translation package reads it at start-up. Fyne 2.7 cannot parse "C.UTF-8"
// (the default of many minimal Linux systems) and logs three lines of
// errors on every run, which would break the one-line error rule of the
// command line. Plain "C" means the same to Fyne: no translation.
//
// It must be imported by package main and depend only on os, so that Go's
// package initialisation order runs it before fyne.io/fyne/v2/lang.
package localefix

import (
	"os"
	"strings"
)

func init() {
	for _, name := range []string{"LC_ALL", "LC_MESSAGES", "LANG"} {
		v := os.Getenv(name)
		if v == "" {
			continue
		}
		if strings.HasPrefix(v, "C.") || strings.HasPrefix(v, "POSIX.") {
			os.Setenv(name, "C")
		}
		return // the first one set is the one that counts
	}
}
