// placeholder replaced by the CLI wiring
int main() { return 0; }
