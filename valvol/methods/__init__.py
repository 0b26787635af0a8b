"""Price and volume methods: pure computations on levels panels."""
