"""circuitlab: design, train by backpropagation through time, and inspect small
recurrent circuits whose connections all carry a delay of one time step."""

__version__ = "0.1.0"
