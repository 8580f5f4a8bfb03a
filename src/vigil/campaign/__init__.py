"""The campaign stage: the campaign file (`spec`), the schedule of visits (`schedule`), the
weather trials (`weather`), and the runner that ties windows, schedule, weather and forecast
together (`run`); its outputs are a `result.CampaignResult`."""
