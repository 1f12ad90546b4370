package sampledata

// SoundCardRig is the demo wheel read by a sound card: the position is the
// amplitude of a 1.5 kHz tone fed through the head's potentiometer, and
// the detector went through the card's AC-coupled input, a single-pole
// high-pass at 20 Hz, with no DC offset left. The head makes one 6 s pass
// after 1 s at rest, within an 8 s capture.
func SoundCardRig() Rig {
	rig := DemoRig()
	rig.Name = "demo bench wheel on a sound card"
	rig.DurationS = 8
	rig.Motion.StartRestS = 1
	rig.Motion.StrokeS = 6
	rig.Motion.PauseCount = 0
	rig.Position.Kind = SensorTone
	rig.Position.CarrierHz = 1500
	rig.Position.OffsetV = 0.1
	rig.Position.VoltsPerMM = 0.0015
	rig.Detector.ACCouplingCornerHz = 20
	rig.Detector.OffsetV = 0
	return rig
}

// StereoSoundCardRig is the sound-card rig on a card with two inputs: the
// detector on one, and on the other the index pulses with the position
// tone added to them (a resistor summing the two into one input). The
// pulses are lower and the tone smaller than on three inputs, so that
// pulses on the tone's peak stay inside the card's full scale.
func StereoSoundCardRig() Rig {
	rig := SoundCardRig()
	rig.Name = "demo bench wheel on a two-input sound card"
	rig.Position.SharesIndexInput = true
	rig.Position.OffsetV = 0.05
	rig.Position.VoltsPerMM = 0.001
	rig.Index.LevelV = 0.4
	rig.Index.NoiseV = rig.Position.NoiseV // the noise of the card's input, as on the position input of three
	return rig
}
