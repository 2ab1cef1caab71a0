package draft

import (
	"regexp"
	"sort"
	"strings"
)

// Tag keys with a meaning of their own. Compared in lower case.
var (
	// equipKeys name the equipment a point belongs to: Haystack's equipRef,
	// Brick's isPointOf, and the usual plain names.
	equipKeys = map[string]bool{"equipref": true, "equip_ref": true, "equip": true, "equipment": true, "ispointof": true, "is_point_of": true,
		"ahu": true, "unit": true, "asset": true, "device": true, "system": true, "equipname": true, "equip_name": true}
	// unitKeys declare the unit of a series.
	unitKeys = map[string]bool{"unit": true, "units": true, "uom": true, "engineering_unit": true, "eu": true}
	// markerListKeys hold Haystack markers as one space- or comma-separated value.
	markerListKeys = map[string]bool{"haystack": true, "markers": true, "hs_tags": true, "tags": true, "marker_tags": true}
	// nameKeys hold a point's human name.
	nameKeys = map[string]bool{"dis": true, "navname": true, "name": true, "point": true, "point_name": true, "description": true, "desc": true, "label": true, "id": true}
	// ignoredKeys say nothing about the role.
	ignoredKeys = map[string]bool{"siteref": true, "site": true, "building": true, "bldg": true, "floor": true, "floorref": true, "spaceref": true, "host": true, "source": true, "kind": true, "tz": true}
	// markerValues are how a Haystack marker's value is written in a tag.
	markerValues = map[string]bool{"m:": true, "✓": true, "marker": true, "true": true, "m": true, "yes": true, "1": true}
)

// brickRe matches a Brick class name such as Supply_Air_Temperature_Sensor
// (with or without the brick: prefix).
var brickRe = regexp.MustCompile(`^(?:brick:)?((?:[A-Z][A-Za-z0-9]*_)+(?:Sensor|Setpoint|Command|Status|Valve|Alarm|Parameter|Point))$`)

// standardTags is what a series' tags say in the open standards.
type standardTags struct {
	brick   string   // a Brick class, "" when none
	markers []string // Haystack marker tags, sorted
	equip   string   // the equipment reference, as written
	unit    string   // a declared unit
	names   []string // human names and other free text, in key order
}

// readTags sorts a series' tags into what the standards and the usual
// conventions say.
func readTags(tags map[string]string) standardTags {
	var st standardTags
	keys := make([]string, 0, len(tags))
	for k := range tags {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	for _, k := range keys {
		v, lk := tags[k], strings.ToLower(k)
		switch {
		case brickRe.MatchString(v):
			st.brick = brickRe.FindStringSubmatch(v)[1]
		case equipKeys[lk] && !(lk == "unit" && looksLikeUnit(v)):
			st.equip = v
		case unitKeys[lk]:
			st.unit = v
		case markerListKeys[lk]:
			st.markers = append(st.markers, strings.FieldsFunc(v, func(r rune) bool { return r == ' ' || r == ',' || r == ';' })...)
		case markerValues[strings.ToLower(v)] && lk != "id":
			st.markers = append(st.markers, k)
		case nameKeys[lk]:
			st.names = append(st.names, v)
		case ignoredKeys[lk]:
		default:
			st.names = append(st.names, v)
		}
	}
	sort.Strings(st.markers)
	return st
}

// looksLikeUnit: a "unit" tag holding °F or CFM is a unit, not equipment.
func looksLikeUnit(v string) bool {
	id, _ := equipID(v)
	return id == "" && len(v) <= 8
}

// haystackText joins Haystack markers into words for the name rules;
// markers that say nothing about a role (point, his, cur, writable) are
// words the rules do not know, and change nothing.
func haystackText(markers []string) string {
	return strings.Join(markers, " ")
}

// brickText turns a Brick class into words: Supply_Air_Temperature_Sensor
// reads "Supply Air Temperature Sensor".
func brickText(class string) string {
	return strings.ReplaceAll(class, "_", " ")
}
