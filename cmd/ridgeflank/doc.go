// Command ridgeflank predicts seafloor depth, heat flow, lithosphere thickness and temperature from seafloor age with published cooling models, computes residual depth, and serves all of it to a browser page.
package main
