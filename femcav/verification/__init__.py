"""`femcav verify`: reference cavities run through the user's path (case file -> mesh ->
solve -> post) and compared with closed forms computed at run time, at two or three mesh
sizes each, written up as a table, verify.json and verify.html."""
