"""The contact plan: findings, rules, the compute pipeline, drafting."""
