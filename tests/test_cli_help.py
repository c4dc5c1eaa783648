"""The command line explains itself: every subcommand has a description and every
option a help text stating its allowed values or default."""

import argparse

import pytest

from holonomy.cli import build_parser


def _subparsers():
    parser = build_parser()
    action = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    return action.choices


@pytest.mark.parametrize("name", sorted(_subparsers()))
def test_every_subcommand_and_option_is_described(name):
    sub = _subparsers()[name]
    assert sub.description and len(sub.description) > 60, name
    assert "Exit codes" in (sub.epilog or "")
    for action in sub._actions:
        if isinstance(action, argparse._HelpAction):
            continue
        assert action.help and len(action.help) > 20, (name, action.dest)
        if action.option_strings and action.nargs != 0 and not action.required:
            assert "default" in action.help, (name, action.dest)
