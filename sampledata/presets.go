package sampledata

import (
	"fmt"
	"strings"
)

// rigPresets are the built-in rigs by name, in the order they are listed.
var rigPresets = []struct {
	name string
	rig  func() Rig
}{
	{"demo", DemoRig},
	{"sound-card", SoundCardRig},
	{"stereo-sound-card", StereoSoundCardRig},
	{"mirror", MirrorRig},
}

// RigPresetNames lists the names RigPreset takes.
func RigPresetNames() []string {
	names := make([]string, len(rigPresets))
	for i, p := range rigPresets {
		names[i] = p.name
	}
	return names
}

// RigPreset returns the built-in rig called name: "demo" (DemoRig),
// "sound-card" (SoundCardRig), "stereo-sound-card" (StereoSoundCardRig) or
// "mirror" (MirrorRig).
func RigPreset(name string) (Rig, error) {
	for _, p := range rigPresets {
		if p.name == name {
			return p.rig(), nil
		}
	}
	return Rig{}, fmt.Errorf("no built-in rig %q: expected one of %s", name, strings.Join(RigPresetNames(), ", "))
}
