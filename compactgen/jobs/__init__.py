"""The user's jobs: build a card, sample cards across the ranges, report range excursions,
calibrate from measured data, freeze and compare releases."""
