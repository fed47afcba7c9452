"""reporting layer."""
