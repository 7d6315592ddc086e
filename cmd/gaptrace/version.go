package main

import "gaptrace/profile/summary"

const version = summary.Version
