//! Hourly weather series, readers (EPW, CSV) with strict checks, and a seeded synthetic season generator.
