// The `fanfold-worker` process: started by the coordinator, never by hand.
#include <iostream>
int main() {
  std::cerr << "fanfold-worker: the worker pool is not wired in yet\n";
  return 2;
}
