"""trialkit: plan, mix, record, analyse and report rust-removal bath trials."""

__all__: list[str] = []
