from scorecard.cli import main

main(prog_name="scorecard")
