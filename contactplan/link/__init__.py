"""Link budget, downlink rate and data volume, and the onboard recorder."""
