//! Airflow through a drying trailer: plenum, floor, bed and fan solved together.
