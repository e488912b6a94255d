"""Safety cautions printed with every design, render and report.

References
----------
.. [1] Fire-service warnings on glass and lenses concentrating sunlight
   (common practice; e.g. national fire-service public advice).
.. [2] ANSI Z97.1, safety glazing materials used in buildings (USA).
.. [3] U.S. Access Board, ADA Accessibility Guidelines (sight lines and reach).
"""

CAUTIONS = (
    "Large converging lenses focus sunlight and can start fires or burn skin: keep the "
    "exhibit out of direct sun and away from windows and skylights.",
    "Never let visitors look at the sun or a bright lamp through the lenses: it can injure eyes.",
    "Lens glass is heavy: secure every lens and the housing against tipping, knocks and theft.",
    "Protect lens edges and housing corners; use safety glazing where a code asks for it "
    "(for example ANSI Z97.1 in the USA).",
    "Provide viewing positions for children and seated visitors; check sight lines and reach "
    "against your local accessibility code.",
    "These are previews, not engineering approval: defer to local building and accessibility "
    "codes and to licensed professionals.",
)


def cautions_text() -> str:
    """The cautions as a short plain-text block."""
    return "Safety:\n" + "\n".join(f"  ! {line}" for line in CAUTIONS)
