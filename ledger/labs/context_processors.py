from ledger.labs.selectors import memberships_of


def current_membership(request):
    """The signed-in person's labs, for the lab switcher in the page header."""
    user = getattr(request, "user", None)
    if user is None or not user.is_authenticated:
        return {}
    return {"my_memberships": memberships_of(user=user)}
