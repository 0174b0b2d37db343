from siting.cli import main

main()
