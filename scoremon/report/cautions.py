"""The cautions every summary carries: scores decide about people."""

CAUTIONS = (
    "Decision support, not an automatic decision: a person reviews every decision. "
    "Fair-lending and data-protection law apply; follow local law and your institution's "
    "model-risk policy. Nothing here is legal advice."
)
