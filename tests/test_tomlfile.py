"""Line numbers of TOML keys (tomlfile.TomlLines) for messages about content: the lines are
counted in the text below (line 1 is the first line of TEXT)."""

from __future__ import annotations

from frontcheck.tomlfile import TomlLines

TEXT = """\
# a project file
[profile]
name = "mine"

[rules.headroom]
severity = "error"
"min margin" = 0.2

[[parts.match]]
value = "AMP-7*"
[[parts.match]]
value = "AMP-9*"
[stage]
U3.target_gain = 10
"""


def test_headers_keys_and_array_entries():
    lines = TomlLines(TEXT)
    assert lines.line_of("profile") == 2
    assert lines.line_of("profile", "name") == 3
    assert lines.line_of("rules.headroom") == 5
    assert lines.line_of("rules.headroom", "severity") == 6
    assert lines.line_of("rules.headroom", "min margin") == 7
    assert lines.line_of("rules") == 5            # only written as sub-tables: the first
    assert lines.nth("parts.match", 0) == 9
    assert lines.nth("parts.match", 1) == 11
    assert lines.nth("parts.match", 2) == 9       # past the last entry: the table's header
    assert lines.line_of("stage.U3", "target_gain") == 14
    assert lines.line_of("missing") is None


def test_the_text_is_scanned_when_a_line_is_first_asked_for():
    lines = TomlLines(TEXT)
    assert lines._text is TEXT                    # nothing scanned on construction
    assert lines.headers["profile"] == 2
    assert lines._text is None
    assert lines.keys[("profile", "name")] == 3 and lines.every["parts.match"] == [9, 11]
