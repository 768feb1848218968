"""Saves the state_dicts of models that are not sentence CNNs of telltale's
kind (Debian's python3-torch), for the import test's refusals.

usage: other_models.py DIR
"""
import os
import sys

import torch
import torch.nn as nn

d = sys.argv[1]
V, DIM = 20, 4


class LSTMClassifier(nn.Module):
    def __init__(self):
        super().__init__()
        self.embedding = nn.Embedding(V, DIM, padding_idx=0)
        self.lstm = nn.LSTM(DIM, 8, batch_first=True)
        self.fc = nn.Linear(8, 2)


class BatchNormCNN(nn.Module):
    def __init__(self):
        super().__init__()
        self.embedding = nn.Embedding(V, DIM, padding_idx=0)
        self.convs = nn.ModuleList(nn.Conv1d(DIM, 3, k) for k in (2, 3))
        self.bn = nn.BatchNorm1d(6)
        self.fc = nn.Linear(6, 2)


class TwoLinearCNN(nn.Module):
    def __init__(self):
        super().__init__()
        self.embedding = nn.Embedding(V, DIM, padding_idx=0)
        self.convs = nn.ModuleList(nn.Conv1d(DIM, 3, k) for k in (2, 3))
        self.hidden = nn.Linear(6, 5)
        self.fc = nn.Linear(5, 2)


class AttentionCNN(nn.Module):
    def __init__(self):
        super().__init__()
        self.embedding = nn.Embedding(V, DIM, padding_idx=0)
        self.attention = nn.MultiheadAttention(DIM, 2)
        self.convs = nn.ModuleList(nn.Conv1d(DIM, 3, k) for k in (2, 3))
        self.fc = nn.Linear(6, 2)


class UnevenCNN(nn.Module):  # a different number of filters per width
    def __init__(self):
        super().__init__()
        self.embedding = nn.Embedding(V, DIM, padding_idx=0)
        self.convs = nn.ModuleList([nn.Conv1d(DIM, 3, 2), nn.Conv1d(DIM, 4, 3)])
        self.fc = nn.Linear(7, 2)


for name, model in {"lstm": LSTMClassifier(), "batchnorm": BatchNormCNN(), "two_linear": TwoLinearCNN(),
                    "attention": AttentionCNN(), "uneven": UnevenCNN()}.items():
    torch.save(model.state_dict(), os.path.join(d, name + ".pt"))
