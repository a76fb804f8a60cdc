"""``rigbench clubs add-member | remove-member | members``: a club's people from the command line.

Run by whoever runs the server (it writes to the database directly, as ``rigbench accounts`` does);
over HTTP the same is ``PUT/DELETE /v1/clubs/{club}/members/{person}``, for the club's officers.
"""

from __future__ import annotations

import argparse

from api.accounts.cli import with_session
from api.settings import Settings


def _club(session, name: str):
    from api.clubs.queries import find_club

    return find_club(session, name)


def run_add_member(args: argparse.Namespace, settings: Settings) -> int:
    from api.clubs import members
    from api.storage.club_models import Role

    def work(session) -> int:
        club = _club(session, args.club)
        row, created = members.set_role(session, club, args.person, Role(args.role), club)
        print(f"{args.person} is now {row.role} of {club.name}")
        return 0

    return with_session(settings, work)


def run_remove_member(args: argparse.Namespace, settings: Settings) -> int:
    from api.clubs import members

    def work(session) -> int:
        club = _club(session, args.club)
        members.remove(session, club, args.person, club)
        print(f"{args.person} is no longer a member of {club.name}")
        return 0

    return with_session(settings, work)


def run_members(args: argparse.Namespace, settings: Settings) -> int:
    from api.clubs import members

    def work(session) -> int:
        club = _club(session, args.club)
        for person, role, since in members.listing(session, club):
            print(f"{person:<40}  {role:<8}  since {since.date().isoformat()}")
        return 0

    return with_session(settings, work)


def add_clubs(subparsers: argparse._SubParsersAction) -> None:
    group = subparsers.add_parser("clubs", help="a club's members and officers")
    commands = group.add_subparsers(dest="clubs_command", required=True, metavar="COMMAND")
    add = commands.add_parser("add-member", help="add a person to a club, or change their role")
    add.add_argument("club", metavar="CLUB", help="the club's handle")
    add.add_argument("person", metavar="PERSON", help="the person's handle (a person account)")
    add.add_argument("--role", choices=["officer", "member"], default="member",
                     help="officer: manages equipment, rigs, loans and members; member: sees members-only items, borrows")
    add.set_defaults(handler=run_add_member)
    remove = commands.add_parser("remove-member", help="remove a person from a club")
    remove.add_argument("club", metavar="CLUB")
    remove.add_argument("person", metavar="PERSON")
    remove.set_defaults(handler=run_remove_member)
    listing = commands.add_parser("members", help="list a club's members and their roles")
    listing.add_argument("club", metavar="CLUB")
    listing.set_defaults(handler=run_members)
