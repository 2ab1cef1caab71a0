package config

import "sort"

// TrendedRoles lists each air handler's configured roles, sorted, by id.
func (c *Config) TrendedRoles() map[string][]string {
	m := make(map[string][]string, len(c.AirHandlers))
	for _, a := range c.AirHandlers {
		roles := make([]string, 0, len(a.Points))
		for r := range a.Points {
			roles = append(roles, r)
		}
		sort.Strings(roles)
		m[a.ID] = roles
	}
	return m
}
