package views

import "strconv"

func tokenRevokeURL(id int64) string {
	return "/account/tokens/" + strconv.FormatInt(id, 10) + "/revoke"
}

func userRoleURL(id int64) string { return "/admin/users/" + strconv.FormatInt(id, 10) + "/role" }

func userDisabledURL(id int64) string {
	return "/admin/users/" + strconv.FormatInt(id, 10) + "/disabled"
}

func userEndSessionsURL(id int64) string {
	return "/admin/users/" + strconv.FormatInt(id, 10) + "/sessions/end"
}
