// Typed errors thrown by the library. The library never prints or exits: the command-line
// front end turns each type into a message and an exit code in one place (cli/run_command.cpp).
#pragma once

#include <stdexcept>
#include <string>

namespace firnray {

// Where a bad input was found. Any field may be empty/zero when unknown.
struct InputLocation {
    std::string file;  // path as the user gave it
    int line = 0;      // 1-based; 0 = unknown
    std::string key;   // e.g. "index.n_deep", a CSV column name, or an option name
    int column = 0;    // 1-based character column in the line (a CSV field, an array element); 0 = unknown

    std::string describe() const;  // "file:line:column: key 'index.n_deep'" (parts omitted when empty)
};

class Error : public std::runtime_error {
public:
    using std::runtime_error::runtime_error;
};

// Bad user input: a model file, station file, table, CSV row, point or option value.
// Subclasses tell the front end which exit code to use.
class InputError : public Error {
public:
    InputError(const std::string& what, InputLocation where = {});
    const InputLocation& where() const noexcept { return where_; }
    const std::string& reason() const noexcept { return reason_; }

private:
    InputLocation where_;
    std::string reason_;
};

// A model file (index, air, attenuation, bottom) or station file is wrong. Exit code 3.
class ModelInputError : public InputError {
public:
    using InputError::InputError;
};

// A data input is wrong: a point, a CSV of pairs or measurements, an option value. Exit code 4.
class DataInputError : public InputError {
public:
    using InputError::InputError;
};

// The numerics failed (integrator did not converge, root not bracketed where one must be). Exit 5.
class NumericalError : public Error {
public:
    using Error::Error;
};

// An output could not be written. Exit code 6.
class OutputError : public Error {
public:
    using Error::Error;
};

// A long computation was asked to stop (Ctrl-C). Exit code 130.
class Cancelled : public Error {
public:
    Cancelled() : Error("interrupted") {}
};

}  // namespace firnray
