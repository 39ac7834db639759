package configs

import _ "embed"

// CurvesYAML is the shipped S-N and stress-rupture curve library
// (curves.yaml), to be parsed by fatigue/sn.ParseLibrary. Only the
// DNV-RP-C203 curves D in it (in air, in seawater with cathodic
// protection, in free corrosion) are published data; every curve marked
// illustrative is a placeholder that the operator must replace with
// qualified data for their own materials.
//
//go:embed curves.yaml
var CurvesYAML []byte
