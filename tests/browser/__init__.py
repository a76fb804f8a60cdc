"""Browser tests. A package, so its test modules may share names with the API tests (test_club_page)."""
