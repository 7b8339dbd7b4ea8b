//! Reports: every file and table the program writes is built here, and `output` is the one writer.

pub mod airflow;
pub mod airflow_fit;
pub mod board;
pub mod calibrate;
pub mod design;
pub mod gantt;
pub mod html;
pub mod load;
pub mod output;
pub mod props;
pub mod season;
pub mod status;
pub mod svg;
pub mod weather;
