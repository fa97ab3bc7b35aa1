// `stagewell send`: streams readings to a `type: tcp` source and waits until each is stored
// (send_client.hpp says how).
#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <fstream>
#include <iostream>
#include <memory>
#include <optional>
#include <string>
#include <thread>

#include "commands.hpp"
#include "send_client.hpp"
#include "send_input.hpp"

namespace stagewell::cli {
namespace {

using send::Inbox;
using send::Sender;
using send::SendOptions;

// The secret in `path`, without surrounding white space; empty when unreadable.
std::string read_token(const std::string& path) {
  std::ifstream file(path, std::ios::binary);
  const std::string text((std::istreambuf_iterator<char>(file)), std::istreambuf_iterator<char>());
  const auto first = text.find_first_not_of(" \t\r\n");
  if (first == std::string::npos) return "";
  return text.substr(first, text.find_last_not_of(" \t\r\n") - first + 1);
}

int run_send(const SendOptions& options) {
  std::optional<std::string> token;
  if (!options.token_file.empty()) {
    token = read_token(options.token_file);
    if (token->empty()) {
      std::cerr << "stagewell send: cannot read a secret from " << options.token_file << '\n';
      return kInvalidInput;
    }
  }
  int fd = STDIN_FILENO;
  if (options.input != "-") {
    fd = ::open(options.input.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
      std::cerr << "stagewell send: cannot open " << options.input << ": " << std::strerror(errno)
                << '\n';
      return kInvalidInput;
    }
  }
  boost::asio::io_context io;
  auto inbox = std::make_shared<Inbox>();
  Sender sender(io, options, token, inbox);
  // The thread owns the descriptor it reads; `io` outlives it unless we give up first (then the
  // process ends right after, and a thread blocked reading stdin must not hold it open).
  std::thread reader([fd, inbox, &io, &sender] {
    send::read_input(fd, inbox, io, [&sender] { sender.on_input(); });
    if (fd != STDIN_FILENO) ::close(fd);
  });
  sender.start();
  io.run();
  const int code = sender.finish_report();
  {
    std::lock_guard lock(inbox->mutex);
    if (!inbox->eof) {
      reader.detach();  // blocked on input we no longer want
      return code;
    }
  }
  reader.join();
  return code;
}

}  // namespace

void add_send_command(CLI::App& program, Action& chosen) {
  auto* command = program.add_subcommand(
      "send", "Send readings to a stagewelld tcp source and wait until each is stored");
  auto options = std::make_shared<SendOptions>();
  command->add_option("input", options->input, "CSV readings: a file, or - for standard input")
      ->required();
  command->add_option("--host", options->host, "The service's address or name")
      ->capture_default_str();
  command->add_option("--port", options->port, "The tcp source's port")
      ->check(CLI::Range(1, 65535))
      ->capture_default_str();
  command->add_option("--token-file", options->token_file,
                      "File holding the source's shared secret (sent first as `auth <secret>`)");
  command
      ->add_option("--tries", options->tries,
                   "Attempts in a row that get nothing acknowledged before giving up")
      ->check(CLI::Range(0, 100))
      ->capture_default_str();
  command
      ->add_option("--ack-timeout", options->ack_timeout_s,
                   "Seconds without an acknowledgement before reconnecting")
      ->check(CLI::Range(1.0, 3600.0))
      ->capture_default_str();
  command->add_flag("-q,--quiet", options->quiet, "Print only the summary");
  command->footer(
      "After a disconnect it reconnects (pauses 0.25 s, 0.5 s, 1 s ... up to 8 s) and sends again "
      "every line after the last acknowledged one. Exit status: 0 when every line is "
      "acknowledged (rejected lines included: they are listed), 1 when some are not (refused, "
      "gave up, unreadable input), 2 on usage errors.");
  command->final_callback(
      [&chosen, options] { chosen = [options] { return run_send(*options); }; });
}

}  // namespace stagewell::cli