package gui

import (
	"encoding/json"
	"slices"
)

// savedRoles are the roles of the last run on a workbook, kept in the
// app's preferences under the workbook's path and sheet, and put back when
// the same sheet is opened again (only the columns it still has).
type savedRoles struct {
	Outcome   string   `json:"outcome"`
	Treatment string   `json:"treatment"`
	Treated   string   `json:"treated,omitempty"`
	Control   string   `json:"control,omitempty"`
	Moderator string   `json:"moderator"`
	Kind      string   `json:"kind"`
	Controls  []string `json:"controls,omitempty"`
	Cluster   string   `json:"cluster,omitempty"`
	Weights   string   `json:"weights,omitempty"`
}

func (u *UI) rolesKey() string { return "roles\x00" + u.path + "\x00" + u.table.Sheet }

// keepRoles stores the roles of a run about to start.
func (s *rolesScreen) keepRoles() {
	u := s.u
	if u.table == nil || u.path == "" {
		return
	}
	r := savedRoles{Outcome: s.outcome.Selected, Treatment: s.treatment.Selected, Treated: s.treated.Selected,
		Control: s.control.Selected, Moderator: s.moderator.Selected, Kind: s.modKind.Selected,
		Controls: s.controls.Selected, Cluster: s.cluster.Selected, Weights: s.weights.Selected}
	if b, err := json.Marshal(r); err == nil {
		u.app.Preferences().SetString(u.rolesKey(), string(b))
	}
}

// restoreRoles puts back the roles kept for this sheet, each only if the
// table still has its column; it reports whether any came back.
func (s *rolesScreen) restoreRoles() bool {
	u := s.u
	var r savedRoles
	if err := json.Unmarshal([]byte(u.app.Preferences().String(u.rolesKey())), &r); err != nil {
		return false
	}
	has := func(name string) bool { return name != "" && u.table.Column(name) != nil }
	set := func(sel interface{ SetSelected(string) }, name string) bool {
		if has(name) {
			sel.SetSelected(name)
			return true
		}
		return false
	}
	back := set(s.outcome, r.Outcome)
	back = set(s.treatment, r.Treatment) || back
	if back {
		s.treatmentChanged()
		if r.Treated != "" && slices.Contains(s.treated.Options, r.Treated) {
			s.treated.SetSelected(r.Treated)
		}
		if r.Control != "" && slices.Contains(s.control.Options, r.Control) {
			s.control.SetSelected(r.Control)
		}
	}
	if set(s.moderator, r.Moderator) {
		back = true
		s.moderatorChanged()
		if r.Kind != "" {
			s.modKind.SetSelected(r.Kind)
			s.kindChanged()
		}
	}
	if r.Cluster == none || has(r.Cluster) {
		s.cluster.SetSelected(r.Cluster)
	}
	if r.Weights == none || has(r.Weights) {
		s.weights.SetSelected(r.Weights)
	}
	s.refreshControls()
	var controls []string
	for _, c := range r.Controls {
		if has(c) && slices.Contains(s.controls.Options, c) {
			controls = append(controls, c)
		}
	}
	s.controls.Selected = controls
	s.controls.Refresh()
	return back
}
